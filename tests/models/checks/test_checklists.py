"""Checklists: the default list, adding, reordering, deactivating, deleting only unused items."""
import pytest

from models.checks.checklist_ops import (
    DEFAULT_ITEMS,
    active_items,
    add_item,
    checklist_for,
    move_item,
    remove_item,
    reword_item,
    set_item_active,
)
from models.core.errors import Invalid
from models.people.tables import Role


def test_an_instrument_without_a_checklist_gets_the_default_list(session, make_instrument):
    instrument = make_instrument()
    template = checklist_for(session, instrument)
    texts = [item.text for item in template.items]
    assert texts == list(DEFAULT_ITEMS)
    for device in ("interlock", "Shutter-open indicator", "warning light", "fail-safe",
                   "Emergency stop", "Key switch", "Labels", "Room posting"):
        assert any(device.lower() in text.lower() for text in texts), device
    assert checklist_for(session, instrument) is template  # made once


def test_items_are_added_moved_and_deactivated(session, make_instrument):
    template = checklist_for(session, make_instrument())
    item = add_item(session, template, "  Viewing window intact  ")
    assert template.items[-1].text == "Viewing window intact"
    move_item(session, item, -1)
    session.expire(template)
    assert [i.text for i in template.items][-2] == "Viewing window intact"
    set_item_active(session, item, False)
    assert item not in active_items(template)
    reword_item(session, item, "Lead-glass window intact")
    assert item.text == "Lead-glass window intact"


def test_blank_and_overlong_wording_is_refused(session, make_instrument):
    template = checklist_for(session, make_instrument())
    with pytest.raises(Invalid):
        add_item(session, template, "   ")
    with pytest.raises(Invalid) as error:
        add_item(session, template, "x" * 301)
    assert "300 characters" in error.value.errors["text"]


def test_an_item_used_in_a_check_cannot_be_deleted(session, make_instrument, make_person,
                                                   record_a_check):
    instrument = make_instrument()
    record_a_check(instrument, make_person(roles=(Role.SAFETY_OFFICER,)))
    template = checklist_for(session, instrument)
    with pytest.raises(Invalid) as error:
        remove_item(session, template.items[0])
    assert "deactivate it" in error.value.errors["item"]
    unused = add_item(session, template, "Spare item")
    remove_item(session, unused)
    assert "Spare item" not in [i.text for i in template.items]


def test_the_last_active_item_stays(session, make_instrument):
    template = checklist_for(session, make_instrument())
    *rest, last = template.items
    for item in rest:
        set_item_active(session, item, False)
    with pytest.raises(Invalid):
        set_item_active(session, last, False)
