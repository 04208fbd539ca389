"""Spreadsheet-safe CSV cells."""
from datetime import UTC, date, datetime
from zoneinfo import ZoneInfo

import pytest

from models.reports.csv_cells import cell, csv_text, inert

BERLIN = ZoneInfo("Europe/Berlin")


# OWASP "CSV Injection": cells beginning with = + - @, tab or carriage return are made inert
# by a leading apostrophe; other text passes unchanged.
@pytest.mark.parametrize(("text", "expected"), [
    ("=HYPERLINK(\"http://x\")", "'=HYPERLINK(\"http://x\")"),
    ("+1+1", "'+1+1"),
    ("-2+3", "'-2+3"),
    ("@SUM(A1)", "'@SUM(A1)"),
    ("\t=1", "'\t=1"),
    ("\r=1", "'\r=1"),
    ("\x07bell", "'\x07bell"),
    ("Door seal, left edge", "Door seal, left edge"),
    ("a=b", "a=b"),
    ("", ""),
])
def test_formula_like_text_is_made_inert(text, expected):
    assert inert(text) == expected


@pytest.mark.parametrize(("value", "expected"), [
    (-0.5, -0.5),  # a number stays a number: a spreadsheet reads it as a value, not a formula
    (3, 3),
    (True, "yes"),
    (None, ""),
    (date(2026, 3, 1), "2026-03-01"),
    # 09:30 UTC on 2 Nov 2026 is 10:30 in Berlin (CET, UTC+1, after the October change).
    (datetime(2026, 11, 2, 9, 30, tzinfo=UTC), "2026-11-02T10:30+01:00"),
    ({"b": 1, "a": "=x"}, '{"a": "=x", "b": 1}'),  # starts with a brace: nothing to defuse
])
def test_cells_keep_numbers_and_show_lab_times(value, expected):
    assert cell(value, BERLIN) == expected


def test_rows_end_in_crlf_and_quote_commas():
    assert csv_text([["a,b", 1], ["=c", None]], BERLIN) == '"a,b",1\r\n\'=c,\r\n'
