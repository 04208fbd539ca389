"""The sessions list by keyset: pages follow each other without gaps or repeats."""
from datetime import UTC, datetime, timedelta

from models.sessions.list_ops import SessionFilter, filtered_usage, session_page


def test_pages_follow_each_other_newest_first(session, make_person, make_instrument, make_session_entry):
    operator = make_person("ada")
    one, two = make_instrument(name="pxrd"), make_instrument(name="xrf")
    start = datetime(2026, 11, 2, 8, tzinfo=UTC)
    made = []
    for n in range(5):
        # Two sessions share each start on different instruments, so the id breaks the tie.
        for instrument in (one, two):
            at = start + timedelta(hours=n)
            made.append(make_session_entry(instrument, operator, started_at=at,
                                           ended_at=at + timedelta(minutes=30)).id)
    seen, key = [], None
    while True:
        page = session_page(session, SessionFilter(), key, size=3)
        seen += [s.id for s in page.rows]
        key = page.next_key
        if key is None:
            break
    assert len(seen) == 10 and len(set(seen)) == 10
    starts = [session.get_one(type(page.rows[0]), i).started_at for i in seen]
    assert starts == sorted(starts, reverse=True)
    only_xrf = session_page(session, SessionFilter(instrument_id=two.id), size=100)
    assert len(only_xrf.rows) == 5 and only_xrf.next_key is None


def test_totals_count_the_whole_range(session, make_person, make_instrument, make_session_entry):
    operator = make_person("ada")
    instrument = make_instrument(name="pxrd")
    at = datetime(2026, 11, 2, 8, tzinfo=UTC)
    make_session_entry(instrument, operator, started_at=at, ended_at=at + timedelta(hours=1),
                       kv=40, ma=30, beam_on_minutes=60)
    make_session_entry(instrument, operator, started_at=at + timedelta(hours=2), kv=40, ma=30)
    totals = filtered_usage(session, SessionFilter(start=at, end=at + timedelta(days=1)))
    # 40 kV x 30 mA = 1.2 kW for one hour: 1.2 kWh; the open session has no beam time yet.
    assert (totals.sessions, totals.beam_hours, round(totals.energy_kwh, 6)) == (2, 1.0, 1.2)
