"""Spreadsheet-safe CSV cells: text that a spreadsheet would run as a formula is made inert."""
from __future__ import annotations

import csv
import io
import json
from collections.abc import Iterable, Iterator
from datetime import date, datetime
from zoneinfo import ZoneInfo

# OWASP "CSV Injection": a cell starting with one of these may be read as a formula.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r", "\n")


def inert(text: str) -> str:
    """Text that no spreadsheet reads as a formula: a leading quote before a risky first character."""
    if text.startswith(FORMULA_STARTS) or (text and ord(text[0]) < 32):
        return "'" + text
    return text


def cell(value, zone: ZoneInfo) -> str | int | float:
    """One CSV cell: numbers stay numbers, times in the lab's zone with their offset, text made inert."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int | float):
        return value
    if isinstance(value, datetime):
        return value.astimezone(zone).isoformat(timespec="minutes")
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, dict | list):
        return inert(json.dumps(value, sort_keys=True, ensure_ascii=False))
    return inert(str(getattr(value, "value", value)))


def csv_text(rows: Iterable[Iterable], zone: ZoneInfo) -> str:
    """Rows as CSV text (CRLF line ends, as RFC 4180 has them), every cell made safe."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\r\n")
    for row in rows:
        writer.writerow([cell(v, zone) for v in row])
    return buffer.getvalue()


def csv_chunks(header: Iterable[str], rows: Iterable[Iterable], zone: ZoneInfo,
               size: int = 500) -> Iterator[str]:
    """The header, then the rows in pieces of `size`, so a long list never sits in memory whole."""
    yield csv_text([header], zone)
    batch = []
    for row in rows:
        batch.append(row)
        if len(batch) == size:
            yield csv_text(batch, zone)
            batch = []
    if batch:
        yield csv_text(batch, zone)
