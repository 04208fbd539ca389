"""The facts shown beside an investigation: what the person did during its window."""
from datetime import UTC, date, datetime
from zoneinfo import ZoneInfo

import pytest

from models.exposure.tables import Investigation
from models.incidents.tables import Incident, IncidentType
from models.reports.context_ops import context_window, investigation_context
from models.surveys.tables import BypassPermit, PermitStatus

UTC_ZONE = ZoneInfo("UTC")


@pytest.mark.parametrize(("period", "start", "raised", "expected"), [
    # A quarter from 1 Oct runs to 31 Dec, even when raised earlier (later sessions matter too).
    ("quarter", date(2026, 10, 1), date(2026, 11, 5), (date(2026, 10, 1), date(2026, 12, 31))),
    ("month", date(2026, 10, 1), date(2026, 11, 5), (date(2026, 10, 1), date(2026, 11, 5))),
    ("year", date(2026, 1, 1), date(2026, 3, 2), (date(2026, 1, 1), date(2026, 12, 31))),
    # A rolling window ends on the day it was crossed.
    ("rolling_12_months", date(2025, 11, 6), date(2026, 11, 5), (date(2025, 11, 6), date(2026, 11, 5))),
])
def test_the_window_runs_from_its_start_to_its_end_or_the_day_raised(period, start, raised, expected):
    item = Investigation(period=period, period_start=start)
    assert context_window(item, raised, 2026) == expected


def test_sessions_permits_and_incidents_of_the_window(session, make_person, make_instrument,
                                                      make_session_entry):
    ada, bo = make_person("ada"), make_person("bo")
    instrument = make_instrument(name="open")
    inside = datetime(2026, 11, 3, 9, tzinfo=UTC)
    make_session_entry(instrument, ada, started_at=inside, ended_at=inside.replace(hour=10))
    make_session_entry(instrument, ada, started_at=datetime(2026, 9, 30, 9, tzinfo=UTC),
                       ended_at=datetime(2026, 9, 30, 10, tzinfo=UTC))  # before the quarter
    make_session_entry(instrument, bo, started_at=inside.replace(hour=11), ended_at=inside.replace(hour=12))
    session.add(BypassPermit(instrument_id=instrument.id, devices="door interlock", reason="alignment",
                             requested_by_id=ada.id, window_start=inside, window_end=inside.replace(hour=12),
                             status=PermitStatus.CLOSED))
    named = Incident(occurred_at=inside, instrument_id=instrument.id, type=IncidentType.NEAR_MISS,
                     description="hand near the beam", reported_by_id=bo.id)
    named.people.append(ada)
    session.add_all([named, Incident(occurred_at=inside, type=IncidentType.OTHER, description="other",
                                     reported_by_id=bo.id)])
    item = Investigation(person_id=ada.id, series="effective", quantity="Hp(10)", location="whole_body",
                         period="quarter", period_start=date(2026, 10, 1), level="level_1", dose_msv=1.3,
                         raised_at=datetime(2026, 11, 5, 8, tzinfo=UTC))
    session.add(item)
    session.commit()
    context = investigation_context(session, item, UTC_ZONE, 2026)
    assert [s.started_at for s in context.sessions] == [inside]
    assert [p.devices for p in context.permits] == ["door interlock"]
    assert [i.description for i in context.incidents] == ["hand near the beam"]
