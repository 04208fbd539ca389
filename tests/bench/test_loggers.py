"""The load script at its quick size: nothing lost, nothing doubled, no server errors (no timings)."""
from __future__ import annotations

from datetime import UTC, datetime, timedelta

import psycopg
import pytest

from bench import loggers
from tests.conftest import BACKENDS, PG_ADMIN_URL, _flag, free_port

T = datetime(2026, 3, 2, 9, 0, tzinfo=UTC)


def _minutes(n: int) -> datetime:
    """T plus n minutes."""
    return T + timedelta(minutes=n)


@pytest.mark.parametrize("rows, expected", [
    ([], 0),
    ([(1, _minutes(0), _minutes(10)), (1, _minutes(10), _minutes(20))], 0),  # back to back
    ([(1, _minutes(0), _minutes(10)), (2, _minutes(5), _minutes(15))], 0),   # other instrument
    ([(1, _minutes(0), _minutes(10)), (1, _minutes(9), _minutes(20))], 1),
    ([(1, _minutes(0), _minutes(60)), (1, _minutes(10), _minutes(20)), (1, _minutes(30), _minutes(40))], 2),
    ([(1, _minutes(0), None), (1, _minutes(600), _minutes(610))], 1),        # an open session
    ([(1, _minutes(0), _minutes(10)), (1, _minutes(0), _minutes(10))], 1),   # the same slot twice
])
def test_double_bookings_counts_sessions_sharing_time(rows, expected):
    assert loggers.double_bookings(rows) == expected


@pytest.mark.parametrize("database", BACKENDS)
def test_the_quick_load_loses_and_doubles_nothing(database):
    if database == "postgresql":
        try:
            psycopg.connect(PG_ADMIN_URL, connect_timeout=3).close()
        except psycopg.OperationalError as error:
            if _flag("REQUIRE_POSTGRES"):
                pytest.fail(f"PostgreSQL is required but unreachable: {error}")
            pytest.skip(f"PostgreSQL unreachable: {error}")
    result = loggers.run(database, port=free_port(), **loggers.QUICK)
    tally = result.tally
    assert tally.requests > 0 and tally.acknowledged, "the loggers logged nothing"
    assert tally.server_errors == 0 and tally.no_answer == 0
    assert result.missing == 0 and result.double_bookings == 0
    assert tally.replay_mismatches == 0
