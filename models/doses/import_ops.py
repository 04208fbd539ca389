"""Import of a dosimetry report as CSV: read, map columns, check every row, then add all or none.

The same checks serve the browser and `flask doses import`. Lookups (people, dosimeters, the
current records' keys) are loaded once per file, never per row.
"""
from __future__ import annotations

import csv
import hashlib
import io
import math
from dataclasses import dataclass, field
from datetime import date, datetime

import sqlalchemy as sa
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session, joinedload

from models.core.base import taken, utcnow
from models.core.bounds import DATE_MESSAGE, date_in_range
from models.core.codes import Location, Quantity, Result
from models.core.errors import Invalid
from models.core.settings import lab_date
from models.core.units import DOSE_UNITS
from models.doses.record_ops import (
    DoseEntry,
    dosimeter_periods,
    duplicate_message,
    entry_errors,
    existing_current_keys,
    overlap_message,
    record_from,
    unit_of,
)
from models.doses.tables import Dosimeter, ImportBatch, ImportMapping
from models.people.tables import Person

# The logbook's fields, in the order of the product's own CSV layout.
FIELDS = ("person", "dosimeter", "wear_start", "wear_end", "quantity", "location", "value", "unit",
          "result", "mrd")
FIELD_LABELS = {
    "person": "Wearer's login", "dosimeter": "Dosimeter serial", "wear_start": "Wear period start",
    "wear_end": "Wear period end", "quantity": "Quantity", "location": "Location", "value": "Value",
    "unit": "Unit", "result": "Result", "mrd": "Minimum reportable dose (MRD)",
}
REQUIRED = ("wear_start", "wear_end", "quantity", "location")
ISO_DATE = "ISO 8601"
# A monthly report of a large lab has a few thousand rows; this bounds the memory a file can take.
MAX_ROWS = 50_000
DUPLICATE = "duplicate"


@dataclass(frozen=True)
class Layout:
    """Which CSV column gives each field, how dates are written, and the unit when none is given."""

    name: str | None
    columns: dict[str, str]
    date_format: str = ISO_DATE
    default_unit: str = "mSv"


# The product's own layout: the header names the fields, dates are ISO 8601.
PRODUCT_LAYOUT = Layout(None, {f: f for f in FIELDS})


def layout_of(mapping: ImportMapping) -> Layout:
    """The layout a saved mapping describes."""
    return Layout(mapping.name, dict(mapping.columns), mapping.date_format, mapping.default_unit)


def date_format_words(fmt: str) -> str:
    """A date format as a person reads it, e.g. '%d.%m.%Y' -> 'DD.MM.YYYY'."""
    if fmt == ISO_DATE:
        return "YYYY-MM-DD"
    for code, words in (("%Y", "YYYY"), ("%y", "YY"), ("%m", "MM"), ("%d", "DD"), ("%b", "Mon")):
        fmt = fmt.replace(code, words)
    return fmt


def parse_date(text: str, fmt: str) -> date:
    """A date written in the layout's format; ValueError when it is not one."""
    if fmt == ISO_DATE:
        return date.fromisoformat(text)
    return datetime.strptime(text, fmt).date()


def save_mapping(session: Session, *, name: str, columns: dict[str, str | None], date_format: str,
                 default_unit: str) -> ImportMapping:
    """Save a named column mapping, checked so that every report read with it can be checked too."""
    name = (name or "").strip()
    columns = {f: c.strip() for f, c in columns.items() if f in FIELDS and c and c.strip()}
    errors = {}
    if not name:
        errors["name"] = "Name the mapping (for example after the dosimetry service)."
    elif taken(session, ImportMapping.name, name):
        errors["name"] = f"A mapping named '{name}' already exists."
    if "person" not in columns and "dosimeter" not in columns:
        errors["person"] = "Choose the column with the wearer's login, or the one with the dosimeter serial."
    for required in REQUIRED:
        if required not in columns:
            errors[required] = f"Choose the column that gives the {FIELD_LABELS[required].lower()}."
    if not _date_format_works(date_format):
        errors["date_format"] = (f"'{date_format}' does not read dates back: use codes such as %d, %m "
                                 "and %Y, e.g. %d.%m.%Y.")
    if default_unit not in DOSE_UNITS:
        errors["default_unit"] = "Choose mSv or mrem."
    if errors:
        raise Invalid(errors)
    mapping = ImportMapping(name=name, columns=columns, date_format=date_format,
                            default_unit=default_unit)
    session.add(mapping)
    session.flush()
    return mapping


def _date_format_works(fmt: str) -> bool:
    """True when a date written in the format reads back as the same date."""
    sample = date(2026, 11, 23)
    if fmt == ISO_DATE:
        return True
    try:
        return parse_date(sample.strftime(fmt), fmt) == sample
    except (ValueError, TypeError):
        return False


def read_csv(data: bytes) -> tuple[list[str], list[tuple[int, list[str]]]]:
    """The header and the non-blank rows (with their line numbers) of a CSV file.

    Rows are read one at a time from the bytes, never as one decoded copy, and a file with more
    than MAX_ROWS rows is refused as soon as the row after the last allowed one is read.
    """
    text = io.TextIOWrapper(io.BytesIO(data), encoding="utf-8-sig", newline="")
    try:
        first = text.readline()
        try:
            dialect = csv.Sniffer().sniff(first, delimiters=",;\t")
        except csv.Error:
            dialect = csv.excel
        text.seek(0)
        reader = csv.reader(text, dialect)
        header = [h.strip() for h in next(reader)]
        rows = []
        for row in reader:
            if any(cell.strip() for cell in row):
                rows.append((reader.line_num, row))
                if len(rows) > MAX_ROWS:
                    raise Invalid.one("file", f"The file has more than {MAX_ROWS:,} rows: split it into "
                                              "smaller reports.")
    except UnicodeDecodeError as error:
        raise Invalid.one("file", "The file is not UTF-8 text: save it as CSV (UTF-8).") from error
    except StopIteration:
        raise Invalid.one("file", "The file is empty.") from None
    except csv.Error as error:
        raise Invalid.one("file", f"The file is not readable as CSV: {error}.") from error
    return header, rows


@dataclass
class Row:
    """One row of the report: its cells by field, what it would record, and what is wrong with it."""

    line: int
    cells: dict[str, str]
    entry: DoseEntry | None = None
    person: Person | None = None
    dosimeter: Dosimeter | None = None
    errors: dict[str, str] = field(default_factory=dict)


@dataclass
class Preview:
    """A checked report: every row with its errors, and whether the same file was imported before."""

    filename: str
    sha256: str
    layout: Layout
    rows: list[Row] = field(default_factory=list)
    file_errors: list[str] = field(default_factory=list)
    earlier: ImportBatch | None = None

    @property
    def bad_rows(self) -> list[Row]:
        """The rows with at least one error."""
        return [r for r in self.rows if r.errors]

    @property
    def ready(self) -> bool:
        """True when committing would add every row."""
        return not self.file_errors and not self.bad_rows and self.earlier is None and bool(self.rows)

    def problems(self) -> list[str]:
        """Every file and row error as one line each, in the file's order."""
        lines = list(self.file_errors)
        for row in self.bad_rows:
            lines += [f"Line {row.line}: {FIELD_LABELS.get(f, 'Row')}: {m}" if f != DUPLICATE
                      else f"Line {row.line}: {m}" for f, m in row.errors.items()]
        return lines


def validate_report(session: Session, data: bytes, layout: Layout, filename: str) -> Preview:
    """Read and check a whole report without writing anything."""
    sha = hashlib.sha256(data).hexdigest()
    preview = Preview(filename, sha, layout)
    preview.earlier = session.scalar(
        sa.select(ImportBatch).where(ImportBatch.sha256 == sha).order_by(ImportBatch.id))
    try:
        header, raw_rows = read_csv(data)
    except Invalid as error:
        preview.file_errors = list(error.errors.values())
        return preview
    missing = [f"The file has no column '{column}' (for {FIELD_LABELS[f].lower()})."
               for f, column in layout.columns.items() if column not in header]
    if missing:
        preview.file_errors = missing
        return preview
    if not raw_rows:
        preview.file_errors = ["The file has a header but no rows."]
        return preview
    position = {f: header.index(column) for f, column in layout.columns.items()}
    preview.rows = [Row(line, {f: (cells[i].strip() if i < len(cells) else "") for f, i in position.items()})
                    for line, cells in raw_rows]
    _validate_rows(session, preview.rows, layout)
    return preview


_QUANTITIES = {q.value.lower(): q for q in Quantity}
_LOCATIONS = {loc.value: loc for loc in Location}
_RESULTS = {r.value: r for r in Result}


def _code(text: str) -> str:
    """A code as typed, made comparable: lower case, spaces and hyphens as underscores."""
    return text.strip().lower().replace(" ", "_").replace("-", "_")


def _validate_rows(session: Session, rows: list[Row], layout: Layout) -> None:
    """Fill in each row's entry and errors; lookups are loaded once for the whole file."""
    logins = {r.cells.get("person") for r in rows} - {None, ""}
    serials = {r.cells.get("dosimeter") for r in rows} - {None, ""}
    people = {p.login: p for p in session.scalars(sa.select(Person).where(Person.login.in_(logins)))} \
        if logins else {}
    dosimeters = {d.serial: d for d in session.scalars(
        sa.select(Dosimeter).where(Dosimeter.serial.in_(serials)).options(joinedload(Dosimeter.wearer)))} \
        if serials else {}
    today = lab_date(session, utcnow())
    for row in rows:
        _parse_row(row, layout, people, dosimeters, today)
    existing = existing_current_keys(session, {r.entry.person_id for r in rows if r.entry} - {None})
    periods = dosimeter_periods(session, {r.entry.dosimeter_id for r in rows if r.entry})
    first_line: dict[tuple, int] = {}
    for row in rows:
        if row.entry is None or row.errors:
            continue
        key = row.entry.key
        overlap = overlap_message(row.entry, periods) if row.entry.dosimeter_id else None
        if key in existing:
            row.errors[DUPLICATE] = duplicate_message(existing[key])
        elif key in first_line:
            row.errors[DUPLICATE] = (f"Repeats line {first_line[key]} of this file (same person, "
                                     "quantity, location and wear period).")
        elif overlap:
            row.errors["wear_start"] = overlap
        else:
            first_line[key] = row.line
            if row.entry.dosimeter_id:  # later lines may not overlap this one either (id 0: a line)
                periods.setdefault((row.entry.dosimeter_id, row.entry.quantity), []).append(
                    (row.entry.wear_start, row.entry.wear_end, 0))


def _parse_row(row: Row, layout: Layout, people: dict, dosimeters: dict, today: date) -> None:
    """Turn one row's cells into a dose entry, collecting every error on the way."""
    cells, errors = row.cells, row.errors
    login, serial = cells.get("person", ""), cells.get("dosimeter", "")
    if login:
        row.person = people.get(login)
        if row.person is None:
            errors["person"] = f"Unknown wearer: no person has the login '{login}'."
    if serial:
        row.dosimeter = dosimeters.get(serial)
        if row.dosimeter is None:
            errors["dosimeter"] = f"Unknown dosimeter serial '{serial}'."
        elif not login:
            row.person = row.dosimeter.wearer
    if not login and not serial:
        errors["person"] = "Give the wearer's login or the dosimeter's serial."
    dates = {}
    for name in ("wear_start", "wear_end"):
        try:
            dates[name] = parse_date(cells[name], layout.date_format)
        except ValueError:
            errors[name] = (f"'{cells[name]}' is not a date written as "
                            f"{date_format_words(layout.date_format)}.")
        else:
            if not date_in_range(dates[name]):
                errors[name] = f"'{cells[name]}': {DATE_MESSAGE}"
                dates[name] = None
    quantity = _QUANTITIES.get(cells["quantity"].lower().replace(" ", ""))
    if quantity is None:
        errors["quantity"] = f"Unknown quantity '{cells['quantity']}': use Hp(10), Hp(0.07) or Hp(3)."
    location = _LOCATIONS.get(_code(cells["location"]))
    if location is None:
        errors["location"] = (f"Unknown location '{cells['location']}': use "
                              f"{', '.join(_LOCATIONS)}.")
    result = _RESULTS.get(_code(cells["result"])) if "result" in cells else Result.MEASURED
    if result is None:
        errors["result"] = f"Unknown result '{cells['result']}': use {', '.join(_RESULTS)}."
    unit = unit_of(cells.get("unit") or layout.default_unit)
    if unit is None:
        errors["unit"] = f"Unknown unit '{cells.get('unit')}': use mSv or mrem."
    numbers = {}
    for name in ("value", "mrd"):
        text = cells.get(name, "")
        try:
            numbers[name] = float(text) if text else None
        except ValueError:
            numbers[name] = None
            errors[name] = f"'{text}' is not a number."
        else:
            if numbers[name] is not None and not math.isfinite(numbers[name]):
                errors[name] = f"'{text}' is not a number."
    if None in (quantity, location, result, unit):
        return
    row.entry = DoseEntry(
        person_id=row.person.id if row.person else None, dosimeter_id=row.dosimeter.id if row.dosimeter else None,
        wear_start=dates.get("wear_start"), wear_end=dates.get("wear_end"), quantity=quantity,
        location=location, result=result, value=numbers["value"], unit=unit, mrd=numbers["mrd"])
    semantic = entry_errors(row.entry, row.dosimeter, today)
    row.errors.update({f: m for f, m in semantic.items() if f not in errors})


def commit_report(session: Session, preview: Preview, *, imported_by_id: int | None = None) -> ImportBatch | None:
    """Add every row of a checked report as one batch; None when this file was imported before.

    Refuses the whole file when any row has an error, so a report goes in completely or not at all.
    """
    if preview.earlier is not None:
        return None
    if preview.file_errors or not preview.rows:
        raise Invalid.one("file", "The file cannot be read as a report; nothing was imported.")
    if preview.bad_rows:
        raise Invalid.one("file", f"{len(preview.bad_rows)} of {len(preview.rows)} rows have errors; "
                                  "nothing was imported.")
    batch = ImportBatch(filename=preview.filename, sha256=preview.sha256,
                        mapping_name=preview.layout.name, row_count=len(preview.rows),
                        imported_by_id=imported_by_id)
    session.add(batch)
    try:
        session.flush()
    except IntegrityError as error:  # the same file committed by someone else a moment ago
        raise Invalid.one("file", "This file has just been imported by someone else; nothing "
                                  "was added.") from error
    session.add_all(record_from(row.entry, import_batch_id=batch.id, created_by_id=imported_by_id)
                    for row in preview.rows)
    session.flush()
    return batch
