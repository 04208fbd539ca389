"""The calendar feed: tokens that renew, and valid iCalendar with stable UIDs."""
from datetime import UTC, date, datetime

import icalendar

from models.due.calendar_ops import build_calendar, person_for_token, renew_token, stop_feed
from models.due.due_list_ops import check_item, refresher_item


def test_renewing_the_token_invalidates_the_old_one(session, make_person):
    person = make_person()
    old = renew_token(session, person)
    assert person_for_token(session, old) is person
    assert old not in person.calendar_token_hash  # only the hash is stored
    new = renew_token(session, person)
    assert person_for_token(session, old) is None
    assert person_for_token(session, new) is person
    stop_feed(session, person)
    assert person_for_token(session, new) is None
    assert person_for_token(session, "") is None


def test_the_calendar_parses_with_all_day_events_and_stable_uids():
    today = date(2024, 2, 20)
    items = [check_item(1, "XRD", date(2024, 1, 31), 30, date(2020, 1, 1), today, 7),
             refresher_item(5, 2, "Ann", 1, "XRD", date(2024, 2, 29), today, 7)]
    stamp = datetime(2024, 2, 20, 9, tzinfo=UTC)
    first = build_calendar(items, "Due", stamp, lambda item: f"https://lab.example/{item.key}")
    again = build_calendar(items, "Due", stamp.replace(hour=10))
    events = icalendar.Calendar.from_ical(first).walk("VEVENT")
    assert [e.decoded("dtstart") for e in events] == [date(2024, 3, 1), date(2024, 2, 29)]
    assert [e.decoded("dtend") for e in events] == [date(2024, 3, 2), date(2024, 3, 1)]  # leap day
    uids = [str(e["uid"]) for e in events]
    assert uids == [str(e["uid"]) for e in icalendar.Calendar.from_ical(again).walk("VEVENT")]
    assert len(set(uids)) == 2
    assert str(events[0]["url"]) == "https://lab.example/check-1-2024-03-01"
