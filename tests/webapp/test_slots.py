"""Areas add to shared pages and to each request only through the slots, in orders checked at start-up."""
from pathlib import Path

import pytest
import sqlalchemy as sa

from models.people.tables import Role
from webapp import create_app, slots
from webapp.extensions import db
from webapp.slots import Slot, SlotOrderClash

WEBAPP = Path(__file__).resolve().parents[2] / "webapp"
SHARED_TEMPLATES = [*(WEBAPP / "templates").glob("*.html"), *(WEBAPP / "home" / "templates").rglob("*.html")]


def test_two_registrations_with_one_order_are_refused_naming_both():
    slot = Slot("test_slot")
    try:
        slot.add("a/_one.html", order=10)(lambda _subject: {})
        slot.add("b/_two.html", order=20)(lambda _subject: {})
        slot.validate_orders()  # distinct orders pass
        slot.add("c/_three.html", order=10)(lambda _subject: {})
        with pytest.raises(SlotOrderClash) as refused:
            slot.validate_orders()
        message = str(refused.value)
        assert "test_slot" in message and "a/_one.html" in message and "c/_three.html" in message
        assert "order 10" in message
    finally:
        slots.ALL_SLOTS.remove(slot)


def test_the_app_does_not_start_with_a_clash(monkeypatch, tmp_path):
    clash = slots.Registration(10, frozenset(), "tests.clashing_panel", None)
    monkeypatch.setattr(slots.home_panels, "entries", [*slots.home_panels.entries, clash])
    with pytest.raises(SlotOrderClash, match="tests.clashing_panel"):
        create_app({"SQLALCHEMY_DATABASE_URI": f"sqlite:///{tmp_path}/x.db", "SECRET_KEY": "x"})


def test_every_registered_slot_has_unique_orders():
    slots.validate_orders()


@pytest.mark.parametrize("template", SHARED_TEMPLATES, ids=lambda p: p.name)
def test_shared_templates_include_no_area_template_by_name(template):
    text = template.read_text(encoding="utf-8")
    assert "{% include \"" not in text and "{% include '" not in text


def test_a_static_file_runs_no_database_query(app, make_person, login):
    client = login(make_person(roles=(Role.SAFETY_OFFICER,)))
    statements = []

    def count(_conn, _cursor, statement, *_args):
        statements.append(statement)

    sa.event.listen(db.engine, "before_cursor_execute", count)
    try:
        with client.get("/static/logbook.css") as response:  # closes the file it streams
            assert response.status_code == 200
        assert statements == []
        # The same listener sees the hooks' queries on a page, so the empty list above means something.
        client.get("/safety")
        assert statements != []
    finally:
        sa.event.remove(db.engine, "before_cursor_execute", count)

