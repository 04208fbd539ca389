"""The exposure page leads with one compact table; every period waits behind a <details>; the chart
shows any of the person's series."""
from __future__ import annotations

import html
import re
from datetime import date

import pytest

from models.core.codes import Location, Quantity
from tests.conftest import put_in_force


def _text(response) -> str:
    return html.unescape(response.get_data(as_text=True))


@pytest.fixture
def operator(session, make_person):
    put_in_force(session, "icrp103")
    session.commit()
    return make_person("op")


def test_compact_table_shows_only_the_periods_with_a_rule(client, login, operator, make_dose):
    make_dose(operator, value=0.4, wear_start=date(2026, 9, 1), wear_end=date(2026, 9, 30))
    page = _text(login(operator).get(f"/exposure/person/{operator.id}?on=2026-11-30"))
    compact = re.search(r'<table class="expo-table expo-compact">(.*?)</table>', page, re.S).group(1)
    header = re.findall(r"<th>([^<]+)</th>", compact.split("</thead>")[0])
    # ICRP 103 Table 6 for an adult worker: a calendar-year limit and a five-year-block limit; the
    # presets add common-practice quarterly levels. No rule for the last 12 months, the month or
    # the last five years, so those three wait behind "show all periods".
    assert header == ["Series", "Calendar year", "Calendar quarter", "Five-year block"]
    assert "Show all periods (3 more without a rule in this set)" in page
    start = page.index('<details class="expo-all">')
    details = page[start:page.index("</details>", start)]
    for period in ("Last 12 months", "Calendar month", "Last five years"):
        assert period in details and period not in compact


def test_the_chart_shows_a_hand_when_asked(client, login, operator, make_dose):
    make_dose(operator, value=12.0, quantity=Quantity.HP007, location=Location.RIGHT_HAND,
              wear_start=date(2026, 9, 1), wear_end=date(2026, 9, 30))
    client = login(operator)
    page = _text(client.get(f"/exposure/person/{operator.id}?series=right_hand"))
    assert '<option value="right_hand" selected>' in page
    assert "series=right_hand" in page
    svg = client.get(f"/exposure/person/{operator.id}/chart.svg?series=right_hand").data.decode()
    assert "Right hand" in svg and "month by month" in svg
    # 500 mSv a year for the hands: ICRP Publication 103, Table 6.
    assert "Annual limit 500 mSv" in svg
    # Junk falls back to whole body, never an error.
    junk = client.get(f"/exposure/person/{operator.id}/chart.svg?series=%00x")
    assert junk.status_code == 200 and "Annual limit 50 mSv" in junk.data.decode()
