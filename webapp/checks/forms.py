"""Forms for recording checks, editing checklists and writing temporary controls."""
from __future__ import annotations

from datetime import datetime

from wtforms import DateTimeLocalField, RadioField, SelectChoice, SelectField, StringField, TextAreaField
from wtforms.validators import DataRequired, Length, Optional

from models.checks.check_ops import RESULT_LABELS, Answer
from models.checks.checklist_ops import MAX_TEXT
from models.checks.tables import ItemResult
from models.core.base import utcnow
from models.instruments.tables import ChecklistItem
from models.surveys.tables import SurveyMeter
from webapp.formatting import from_local, lab_zone
from webapp.forms import LogbookForm

WHEN_FORMAT = "%Y-%m-%dT%H:%M"
NO_METER = ""


class CheckForm(LogbookForm):
    """When, which meter, notes; one result and comment field per item are added per checklist."""

    performed_at = DateTimeLocalField("When the check was done (lab time)", format=WHEN_FORMAT,
                                      validators=[DataRequired("Enter when the check was done.")])
    meter_id = SelectField("Survey meter used", choices=[], validators=[Optional()],
                           description="Only if readings were taken during the check.")
    notes = TextAreaField("Notes", validators=[Length(max=4000)])

    def item_fields(self, item: ChecklistItem):
        """The result and comment fields of one item."""
        return self[f"result_{item.id}"], self[f"comment_{item.id}"]

    def answers(self, items: list[ChecklistItem]) -> dict[int, Answer]:
        """The item results as the domain takes them."""
        answers = {}
        for item in items:
            result, comment = self.item_fields(item)
            known = result.data in {r.value for r in ItemResult}
            answers[item.id] = Answer(ItemResult(result.data) if known else None, comment.data or "")
        return answers

    def meter_pk(self) -> int | None:
        """The chosen meter's id, or None (also for a value not offered)."""
        data = self.meter_id.data or NO_METER
        return int(data) if data.isdigit() else None

    def performed_at_utc(self) -> datetime | None:
        """The entered time as UTC."""
        return from_local(self.performed_at.data)


def check_form(items: list[ChecklistItem], meters: list[SurveyMeter]) -> CheckForm:
    """A check form with a result and comment for each active item."""

    class Form(CheckForm):
        pass

    for item in items:
        setattr(Form, f"result_{item.id}", RadioField(
            item.text, choices=[SelectChoice(r.value, label) for r, label in RESULT_LABELS.items()],
            validate_choice=False))
        setattr(Form, f"comment_{item.id}", TextAreaField(
            "Comment", validators=[Length(max=2000)], render_kw={"rows": 1}))
    form = Form()
    form.meter_id.choices = [SelectChoice(NO_METER, "No meter used")] + [
        SelectChoice(str(m.id), f"{m.serial} {m.model}".strip()) for m in meters]
    if not form.is_submitted():
        form.performed_at.data = utcnow().astimezone(lab_zone()).replace(second=0, microsecond=0,
                                                                  tzinfo=None)
    return form


class ItemForm(LogbookForm):
    """The wording of one checklist item."""

    text = StringField("Item", validators=[DataRequired("Say what is to be tested."),
                                           Length(max=MAX_TEXT)])


class ReasonForm(LogbookForm):
    """Why an item is taken off (or put back on) the list."""

    reason = StringField("Reason", validators=[DataRequired("Say why."), Length(max=500)])


class ControlForm(LogbookForm):
    """Temporary written controls and their expiry."""

    description = TextAreaField(
        "Written controls", validators=[DataRequired("Write the controls."), Length(max=4000)],
        description="What replaces the failed device until it is repaired (e.g. second person "
                    "present, shutter locked, area barrier), and who may operate.")
    expires_at = DateTimeLocalField("Controls expire at (lab time)", format=WHEN_FORMAT,
                                    validators=[DataRequired("Enter when the controls expire.")])

    def expires_at_utc(self) -> datetime | None:
        """The expiry as UTC."""
        return from_local(self.expires_at.data)
