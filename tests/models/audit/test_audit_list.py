"""The audit trail by keyset, with its filters."""
from datetime import UTC, datetime

from models.audit.list_ops import EventFilter, event_page


def test_pages_and_filters(session, make_person):
    people = [make_person(f"p{n}") for n in range(5)]  # each commit writes person events
    everything, next_id = event_page(session, EventFilter(), size=1000)
    assert next_id is None and len(everything) >= 5
    seen, before = [], None
    while True:
        page, before = event_page(session, EventFilter(), before, size=2)
        seen += [e.id for e in page]
        if before is None:
            break
    assert seen == sorted(seen, reverse=True) == [e.id for e in everything]
    persons, _ = event_page(session, EventFilter(entity="person"), size=1000)
    assert {e.entity_id for e in persons} >= {p.id for p in people}
    hidden, _ = event_page(session, EventFilter(hidden=frozenset({"person"})), size=1000)
    assert all(e.entity != "person" for e in hidden)
    later, _ = event_page(session, EventFilter(start=datetime(2100, 1, 1, tzinfo=UTC)), size=1000)
    assert later == []
