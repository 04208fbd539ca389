"""The due list built from column selects equals the one built from ORM objects, on the demo lab.

`data/demo_due_list.json` was written by the ORM-object version of models.due.due_list_ops (the
one before the column selects) from this same demo lab and moment; the rewrite must give the same
tasks, states, lateness and order, for the lab, for each person, and pending-only in SQL.
"""
import json
import os
from datetime import UTC, date, datetime

import pytest
import sqlalchemy as sa

from models.due.due_list_ops import lab_items, pending, person_items
from models.people.tables import Person
from webapp.demo.lab import load_demo_lab

TODAY = date(2026, 5, 14)
NOW = datetime(2026, 5, 14, 10, 0, tzinfo=UTC)
SNAPSHOT = os.path.join(os.path.dirname(__file__), "data", "demo_due_list.json")


def as_lines(items) -> list[list]:
    """Each task as plain values, in the list's order."""
    return [[i.key, i.kind, i.subject, i.state, i.days_late, i.target_kind, i.target_id, i.person_id,
             i.instrument_id] for i in items]


def lists(session) -> dict:
    """The lab's list and every person's own list."""
    people = session.scalars(sa.select(Person).order_by(Person.login)).all()
    return {"lab": as_lines(lab_items(session, NOW)),
            **{p.login: as_lines(person_items(session, p, NOW)) for p in people}}


@pytest.fixture
def demo(session):
    load_demo_lab(session, TODAY, None)
    session.commit()
    return session


def test_the_demo_lab_due_lists_are_unchanged(demo):
    with open(SNAPSHOT) as kept:
        assert lists(demo) == json.load(kept)


def test_pending_in_sql_equals_pending_afterwards(demo):
    assert as_lines(lab_items(demo, NOW, pending_only=True)) == as_lines(pending(lab_items(demo, NOW)))
    for person in demo.scalars(sa.select(Person)):
        assert (as_lines(person_items(demo, person, NOW, pending_only=True))
                == as_lines(pending(person_items(demo, person, NOW))))
