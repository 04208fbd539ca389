"""Each instrument's checklist of safety devices: the default list and the safety officer's edits."""
from __future__ import annotations

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.checks.tables import CheckItemResult
from models.core.errors import Invalid
from models.instruments.tables import ChecklistItem, ChecklistTemplate, Instrument

# What a safety-device check covers on analytical X-ray equipment (common practice); the safety
# officer splits lines per door or port, or marks them not applicable, for each instrument.
DEFAULT_ITEMS = (
    "Door and panel interlocks: opening each door or removable panel closes the shutters or "
    "stops X-ray production",
    "Shutter-open indicator at each port shows open exactly when that shutter is open",
    "X-ray-on warning light is lit whenever the tube is energised",
    "Warning light fail-safe: with the lamp failed or removed, X-rays cannot be produced",
    "Emergency stop switches X-ray production off at once",
    "Key switch: X-rays cannot be switched on without the key",
    "Labels on the tube housing and enclosure are present and legible",
    "Room posting at the entrance is present and up to date",
)

MAX_TEXT = 300


def checklist_for(session: Session, instrument: Instrument) -> ChecklistTemplate:
    """The instrument's checklist, created from the default list when it has none."""
    if instrument.checklist_template is not None:
        return instrument.checklist_template
    template = ChecklistTemplate(name=f"Checklist for instrument {instrument.id}")
    template.items = [ChecklistItem(position=n, text=text) for n, text in enumerate(DEFAULT_ITEMS)]
    session.add(template)
    instrument.checklist_template = template
    session.flush()
    return template


def active_items(template: ChecklistTemplate) -> list[ChecklistItem]:
    """The items a check must answer, in their order."""
    return [item for item in template.items if item.active]


def _clean_text(text: str | None) -> str:
    """An item's wording, or a refusal naming the limit."""
    text = (text or "").strip()
    if not text:
        raise Invalid.one("text", "Say what is to be tested.")
    if len(text) > MAX_TEXT:
        raise Invalid.one("text", f"Keep the item to {MAX_TEXT} characters; it has {len(text)}.")
    return text


def add_item(session: Session, template: ChecklistTemplate, text: str) -> ChecklistItem:
    """Add an item at the end of the list."""
    item = ChecklistItem(text=_clean_text(text),
                         position=max((i.position for i in template.items), default=-1) + 1)
    template.items.append(item)
    session.flush()
    return item


def reword_item(session: Session, item: ChecklistItem, text: str) -> ChecklistItem:
    """Change an item's wording; past results keep the wording they were tested against."""
    item.text = _clean_text(text)
    session.flush()
    return item


def move_item(session: Session, item: ChecklistItem, step: int) -> ChecklistItem:
    """Move an item up (step -1) or down (step +1) by swapping it with its neighbour."""
    items = sorted(item.template.items, key=lambda i: (i.position, i.id))
    index = items.index(item)
    other = index + step
    if 0 <= other < len(items):
        items[index], items[other] = items[other], items[index]
        # Renumber all, so that equal positions left by older edits cannot stall a move.
        for position, each in enumerate(items):
            each.position = position
        session.flush()
    return item


def set_item_active(session: Session, item: ChecklistItem, active: bool) -> ChecklistItem:
    """Stop asking an item in new checks (or ask it again); it stays in past results."""
    if not active and item.active and len(active_items(item.template)) == 1:
        raise Invalid.one("item", "A checklist needs at least one active item.")
    item.active = active
    session.flush()
    return item


def item_is_used(session: Session, item: ChecklistItem) -> bool:
    """Whether any recorded check answered this item."""
    return session.scalar(
        sa.select(sa.func.count()).select_from(CheckItemResult)
        .where(CheckItemResult.item_id == item.id)
    ) > 0


def remove_item(session: Session, item: ChecklistItem) -> None:
    """Delete an item never used in a check; a used item can only be deactivated."""
    if item_is_used(session, item):
        raise Invalid.one("item", "This item was answered in a recorded check; deactivate it "
                                  "instead so that the record stays complete.")
    if item.active and len(active_items(item.template)) == 1:
        raise Invalid.one("item", "A checklist needs at least one active item.")
    item.template.items.remove(item)
    session.flush()
