"""Import of a dosimetry report as CSV: read, map columns, check every row, then add all or none.

The same checks serve the browser and `flask doses import`. The file is read a chunk at a time;
look-ups (people, dosimeters, the current records' keys) are one query per chunk, never per row.
Checked chunks wait in the staging table, each written in a short transaction of its own, so other
writers are not held up while a large file is checked. `_publish` then adds them all in one short
step: the rows go in by one INSERT ... SELECT, what another writer may have changed meanwhile is
checked again in SQL under the write lock, and the audit trail records the batch by one event (the
file's SHA-256, the row count and a digest over the rows in order).
"""
from __future__ import annotations

import codecs
import csv
import gc
import hashlib
import io
import itertools
import json
import math
import uuid
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from datetime import date, datetime, timedelta

import sqlalchemy as sa
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session, joinedload

from models.audit.audit_ops import RowsDigest, append_events, bulk_columns, bulk_event, row_snapshot
from models.core.base import taken, utcnow
from models.core.bounds import DATE_MESSAGE, date_in_range
from models.core.changes import mark_dose_inputs_changed
from models.core.codes import Location, Quantity, Result
from models.core.database import hold_write_lock
from models.core.errors import Invalid
from models.core.settings import lab_date
from models.core.units import DOSE_UNITS
from models.doses.record_ops import (
    DoseEntry,
    current_keys_among,
    dosimeter_periods,
    duplicate_message,
    entry_errors,
    overlap_message,
    record_values,
    unit_of,
)
from models.doses.tables import DoseRecord, Dosimeter, ImportBatch, ImportMapping, ImportStaging
from models.doses.version_ops import is_current
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
DUPLICATE = "duplicate"
# Rows read, checked and written at a time: memory follows the chunk, not the file.
CHUNK = 5000
# Rows and bad rows a preview keeps to show: counts and the first problems, never every row's HTML.
SHOWN = 50
# A monthly report of a large lab has a few thousand rows; this bounds the memory a file can take.
MAX_ROWS = 50_000


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


def _reader(data: bytes) -> tuple[list[str], Iterator[tuple[int, list[str]]]]:
    """The header and a stream of the non-blank rows (with their line numbers) of a CSV file.

    Rows are decoded one at a time from the bytes, never as one decoded copy, and a file with more
    than MAX_ROWS rows is refused as soon as the row after the last allowed one is read.
    """
    not_utf8 = "The file is not UTF-8 text: save it as CSV (UTF-8)."
    # Checked whole before any column is read, a megabyte at a time, keeping none of the text.
    decoder = codecs.getincrementaldecoder("utf-8-sig")()
    try:
        for start in range(0, len(data), 1 << 20):
            decoder.decode(data[start:start + (1 << 20)])
        decoder.decode(b"", final=True)
    except UnicodeDecodeError as error:
        raise Invalid.one("file", not_utf8) from error
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
    except UnicodeDecodeError as error:
        raise Invalid.one("file", not_utf8) from error
    except StopIteration:
        raise Invalid.one("file", "The file is empty.") from None
    except csv.Error as error:
        raise Invalid.one("file", f"The file is not readable as CSV: {error}.") from error

    def rows() -> Iterator[tuple[int, list[str]]]:
        """Non-blank rows; an unreadable row or one past MAX_ROWS is a file error."""
        count = 0
        try:
            for row in reader:
                if any(cell.strip() for cell in row):
                    count += 1
                    if count > MAX_ROWS:
                        raise Invalid.one("file", f"The file has more than {MAX_ROWS:,} rows: split it "
                                                  "into smaller reports.")
                    yield reader.line_num, row
        except UnicodeDecodeError as error:
            raise Invalid.one("file", not_utf8) from error
        except csv.Error as error:
            raise Invalid.one("file", f"The file is not readable as CSV: {error}.") from error
    return header, rows()


def read_csv(data: bytes) -> tuple[list[str], list[tuple[int, list[str]]]]:
    """The header and the non-blank rows (with their line numbers) of a CSV file."""
    header, rows = _reader(data)
    return header, list(rows)


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
    """A checked report: counts, the first rows and the first bad rows, and any earlier import.

    Only the first SHOWN rows and bad rows are kept, so checking a large file needs memory for a
    chunk, not for the file.
    """

    filename: str
    sha256: str
    layout: Layout
    data: bytes = field(default=b"", repr=False)
    rows: list[Row] = field(default_factory=list)
    bad_rows: list[Row] = field(default_factory=list)
    row_count: int = 0
    bad_count: int = 0
    file_errors: list[str] = field(default_factory=list)
    earlier: ImportBatch | None = None
    batch: ImportBatch | None = None

    @property
    def ready(self) -> bool:
        """True when committing would add every row."""
        return not self.file_errors and not self.bad_count and self.earlier is None and bool(self.row_count)

    def keep(self, rows: list[Row]) -> None:
        """Count a checked chunk, keeping the first rows and bad rows for the page."""
        self.row_count += len(rows)
        self.rows += rows[:SHOWN - len(self.rows)]
        bad = [r for r in rows if r.errors]
        self.bad_count += len(bad)
        self.bad_rows += bad[:SHOWN - len(self.bad_rows)]

    def problems(self) -> list[str]:
        """Every file error and the errors of the first bad rows, as one line each."""
        lines = list(self.file_errors)
        for row in self.bad_rows:
            lines += [f"Line {row.line}: {FIELD_LABELS.get(f, 'Row')}: {m}" if f != DUPLICATE
                      else f"Line {row.line}: {m}" for f, m in row.errors.items()]
        return lines


def validate_report(session: Session, data: bytes, layout: Layout, filename: str) -> Preview:
    """Read and check a whole report without writing anything."""
    preview = Preview(filename, hashlib.sha256(data).hexdigest(), layout, data)
    preview.earlier = session.scalar(
        sa.select(ImportBatch).where(ImportBatch.sha256 == preview.sha256).order_by(ImportBatch.id))
    try:
        for chunk in _chunks(data, layout, _Checker(session, layout)):
            preview.keep(chunk)
    except Invalid as error:
        preview.file_errors = list(error.errors.values())
        preview.rows, preview.bad_rows, preview.row_count, preview.bad_count = [], [], 0, 0
        return preview
    if not preview.row_count:
        preview.file_errors = ["The file has a header but no rows."]
    return preview


def _chunks(data: bytes, layout: Layout, checker: _Checker) -> Iterator[list[Row]]:
    """The report's rows, CHUNK at a time, each chunk checked; Invalid for an unreadable file."""
    header, raw_rows = _reader(data)
    missing = [f"The file has no column '{column}' (for {FIELD_LABELS[f].lower()})."
               for f, column in layout.columns.items() if column not in header]
    if missing:
        raise Invalid({f"column{i}": message for i, message in enumerate(missing)})
    position = [(f, header.index(column)) for f, column in layout.columns.items()]
    while raw := list(itertools.islice(raw_rows, CHUNK)):
        rows = [Row(line, {f: (cells[i].strip() if i < len(cells) else "") for f, i in position})
                for line, cells in raw]
        checker.check(rows)
        yield rows


_QUANTITIES = {q.value.lower(): q for q in Quantity}
_LOCATIONS = {loc.value: loc for loc in Location}
_RESULTS = {r.value: r for r in Result}


def _code(text: str) -> str:
    """A code as typed, made comparable: lower case, spaces and hyphens as underscores."""
    return text.strip().lower().replace(" ", "_").replace("-", "_")


class _Checker:
    """Checks a report chunk by chunk: set-based look-ups per chunk, repeats across the whole file."""

    def __init__(self, session: Session, layout: Layout) -> None:
        self.session, self.layout = session, layout
        self.people: dict[str, Person] = {}
        self.dosimeters: dict[str, Dosimeter] = {}
        self.first_line: dict[tuple, int] = {}
        self.today = lab_date(session, utcnow())
        # Each dosimeter's wear periods so far, the file's earlier lines included (record id 0).
        self.periods: dict[tuple, list[tuple[date, date, int]]] = {}

    def check(self, rows: list[Row]) -> None:
        """Fill in each row's entry and errors."""
        self._load(rows)
        for row in rows:
            _parse_row(row, self.layout, self.people, self.dosimeters, self.today)
        good = [r for r in rows if r.entry is not None and not r.errors]
        existing = current_keys_among(self.session, {r.entry.key for r in good})
        for row in good:
            key = row.entry.key
            overlap = overlap_message(row.entry, self.periods) if row.entry.dosimeter_id else None
            if key in existing:
                row.errors[DUPLICATE] = duplicate_message(existing[key])
            elif key in self.first_line:
                row.errors[DUPLICATE] = (f"Repeats line {self.first_line[key]} of this file (same "
                                         "person, quantity, location and wear period).")
            elif overlap:
                row.errors["wear_start"] = overlap
            else:
                self.first_line[key] = row.line
                if row.entry.dosimeter_id:  # later lines may not overlap this one either
                    self.periods.setdefault((row.entry.dosimeter_id, row.entry.quantity), []).append(
                        (row.entry.wear_start, row.entry.wear_end, 0))

    def _load(self, rows: list[Row]) -> None:
        """Look up the chunk's people and dosimeters not seen before, one query each."""
        logins = {r.cells.get("person") for r in rows} - {None, ""} - self.people.keys()
        serials = {r.cells.get("dosimeter") for r in rows} - {None, ""} - self.dosimeters.keys()
        if logins:
            self.people.update((p.login, p) for p in self.session.scalars(
                sa.select(Person).where(Person.login.in_(logins))))
        if serials:
            found = list(self.session.scalars(sa.select(Dosimeter).where(Dosimeter.serial.in_(serials))
                                              .options(joinedload(Dosimeter.wearer))))
            self.dosimeters.update((d.serial, d) for d in found)
            for key, periods in dosimeter_periods(self.session, {d.id for d in found}).items():
                self.periods.setdefault(key, []).extend(periods)


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


class Refused(Invalid):
    """A report refused because a row or the file has an error; `preview` tells which."""

    def __init__(self, preview: Preview) -> None:
        what = (f"{preview.bad_count} of {preview.row_count} rows have errors" if preview.row_count
                else "The file cannot be read as a report")
        super().__init__({"file": f"{what}; nothing was imported."})
        self.preview = preview


def import_report(session: Session, data: bytes, layout: Layout, filename: str, *,
                  imported_by_id: int | None = None) -> Preview:
    """Check and add a whole report, chunk by chunk; `preview.batch` is what was added.

    Nothing is added when the same file was imported before (`preview.earlier`). When any row has
    an error, raises Refused after checking every row. The rows are checked and staged without the
    write lock, a chunk per short transaction, so other writers go on meanwhile; then `_publish`
    adds them all in one short step, in the caller's transaction (committed by it).
    """
    preview = Preview(filename, hashlib.sha256(data).hexdigest(), layout, data)
    preview.earlier = session.scalar(
        sa.select(ImportBatch).where(ImportBatch.sha256 == preview.sha256).order_by(ImportBatch.id))
    if preview.earlier is not None:
        return preview
    stage = _Stage(session, imported_by_id)
    try:
        with _no_cycle_collection():
            for chunk in _chunks(data, layout, _Checker(session, layout)):
                preview.keep(chunk)
                if not preview.bad_count:
                    stage.write(chunk)
    except Invalid as error:
        stage.discard()
        preview.file_errors = list(error.errors.values())
        raise Refused(preview) from error
    if preview.bad_count or not preview.row_count:
        stage.discard()
        raise Refused(preview)
    preview.batch = _publish(session, preview, stage)
    return preview


@contextmanager
def _no_cycle_collection() -> Iterator[None]:
    """Pause Python's cycle collector: a chunk makes ~100,000 short-lived acyclic objects, and the
    collector's repeated passes over them cost a quarter of the import; memory stays bounded."""
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


# Stands for the batch id in the rows' digest lines until the batch exists (see _Stage.digest).
_BATCH_ID = "\0batch"
_BATCH_ID_JSON = json.dumps(_BATCH_ID).encode()
# The columns of a dose record that the file decides; the rest are the batch's (_Stage.constants).
_STAGED = ("person_id", "dosimeter_id", "wear_start", "wear_end", "quantity", "location", "value_msv",
           "result", "mrd_msv", "source", "basis", "entered_unit")
# A run staged longer ago than this was abandoned (an import takes seconds): a later import removes it.
STALE_AFTER = timedelta(hours=1)


class _Stage:
    """One import's checked rows, waiting in the staging table until they are published.

    Each chunk is written in a short transaction of its own (on another connection), so the write
    lock is held for milliseconds at a time. When the caller's SQLite transaction has already
    written, it holds the lock anyway and the rows are staged in it instead (waiting for ourselves
    would never end). The digest lines of the rows are kept (about 200 bytes a row) with a stand-in
    for the batch id, which only the publish knows.
    """

    def __init__(self, session: Session, imported_by_id: int | None) -> None:
        self.session, self.run, self.staged_at = session, uuid.uuid4().hex, utcnow()
        self.table = ImportStaging.__table__
        self.constants = {"import_batch_id": _BATCH_ID, "created_by_id": imported_by_id,
                          "created_at": self.staged_at, "supersedes_id": None, "version": 1, "reason": None,
                          "incident_id": None}
        self.columns = bulk_columns(DoseRecord.__table__)
        self.lines: list[tuple[bytes, int]] = []
        connection = session.connection()
        self.in_callers = (connection.dialect.name == "sqlite"
                           and connection.connection.driver_connection.in_transaction)
        self._execute(sa.delete(self.table).where(self.table.c.staged_at < self.staged_at - STALE_AFTER))

    def _execute(self, statement: sa.Executable, params: list[dict] | None = None) -> None:
        """Run one statement in a short transaction of its own (or in the caller's, see above)."""
        if self.in_callers:
            self.session.connection().execute(statement, params)
            return
        with self.session.connection().engine.begin() as connection:
            connection.execute(statement, params)

    def write(self, rows: list[Row]) -> None:
        """Stage one chunk of checked rows, in file order."""
        staged = [record_values(r.entry, run=self.run, staged_at=self.staged_at, line=r.line) for r in rows]
        line = RowsDigest(self.columns).line
        self.lines.append((b"".join([line({**values, **self.constants}) for values in staged]), len(staged)))
        self._execute(sa.insert(self.table), staged)

    def digest(self, batch_id: int) -> RowsDigest:
        """The digest over the staged rows as the batch stores them, in file order."""
        digest = RowsDigest(self.columns)
        number = str(batch_id).encode()
        for lines, count in self.lines:
            digest.add_lines(lines.replace(_BATCH_ID_JSON, number), count)
        return digest

    def discard(self) -> None:
        """Remove this run's staged rows (a refused import)."""
        self._execute(sa.delete(self.table).where(self.table.c.run == self.run))


def _publish(session: Session, preview: Preview, stage: _Stage) -> ImportBatch:
    """Add the staged rows as the batch's dose records: the one place an import's rows are published.

    In the caller's transaction: the batch's row and one INSERT ... SELECT from the staging table in
    file order; then, under the write lock, what another writer may have changed since the rows were
    checked is checked again in SQL (Refused when it did), the batch's audit events are appended and
    the staged rows removed. On SQLite the first insert takes the lock already; on PostgreSQL the
    rows stay unseen by others until the commit, so other writers wait only for the last steps.
    """
    _refuse(preview, _gone(session, stage.run))
    batch_id = _insert_batch(session, preview, stage.constants["created_by_id"])
    table, staged = DoseRecord.__table__, stage.table
    constants = {"import_batch_id": batch_id, "created_by_id": stage.constants["created_by_id"],
                 "created_at": stage.staged_at, "version": 1}
    added = session.connection().execute(sa.insert(table).from_select(
        [*_STAGED, *constants],
        sa.select(*(staged.c[c] for c in _STAGED),
                  *(sa.literal(v, table.c[k].type).label(k) for k, v in constants.items()))
        .where(staged.c.run == stage.run).order_by(staged.c.line)).execution_options(preserve_rowcount=True))
    if added.rowcount != preview.row_count:  # a run staged for over STALE_AFTER was removed meanwhile
        raise Invalid.one("file", "The import took too long and its checked rows were cleared; "
                                  "nothing was imported. Import the file again.")
    hold_write_lock(session)
    _refuse(preview, _repeated(session, stage.run, batch_id))
    mark_dose_inputs_changed(session, set(session.scalars(
        sa.select(staged.c.person_id).where(staged.c.run == stage.run).distinct())))
    batches = ImportBatch.__table__
    created = {"entity": batches.name, "entity_id": batch_id, "action": "create", "before": None,
               "after": row_snapshot(session.connection().execute(
                   sa.select(batches).where(batches.c.id == batch_id)).one())}
    event = bulk_event(table, "import_batch_id", batch_id, stage.digest(batch_id), file_sha256=preview.sha256)
    append_events(session.connection(), [created, event], session.info.get("actor_id"),
                  session.info.get("audit_reason"))
    session.connection().execute(sa.delete(staged).where(staged.c.run == stage.run))
    return session.get(ImportBatch, batch_id)


def _refuse(preview: Preview, errors: dict[int, dict[str, str]]) -> None:
    """Refuse the whole file when any line has an error, keeping the first as the preview shows them."""
    if errors:
        preview.bad_count = len(errors)
        preview.bad_rows = [Row(line, {}, errors=errors[line]) for line in sorted(errors)[:SHOWN]]
        raise Refused(preview)


def _gone(session: Session, run: str) -> dict[int, dict[str, str]]:
    """Errors of the staged rows whose wearer or dosimeter is no longer on file, by line."""
    staged = ImportStaging.__table__
    gone = sa.or_(~sa.exists().where(Person.id == staged.c.person_id),
                  sa.and_(staged.c.dosimeter_id.is_not(None), ~sa.exists().where(Dosimeter.id == staged.c.dosimeter_id)))
    return {line: {"person": "The wearer or the dosimeter is no longer on file."}
            for (line,) in session.execute(sa.select(staged.c.line).where(staged.c.run == run, gone))}


def _repeated(session: Session, run: str, batch_id: int) -> dict[int, dict[str, str]]:
    """Errors of the staged rows that repeat a current record, or overlap one of its dosimeter's,
    other than the batch's own, by line: set-based, one query each."""
    staged = ImportStaging.__table__
    others = sa.and_(is_current(), sa.or_(DoseRecord.import_batch_id.is_(None), DoseRecord.import_batch_id != batch_id))
    same_key = sa.and_(DoseRecord.person_id == staged.c.person_id, DoseRecord.wear_start == staged.c.wear_start,
                       DoseRecord.wear_end == staged.c.wear_end, DoseRecord.quantity == staged.c.quantity,
                       DoseRecord.location == staged.c.location)
    # A record with a dosimeter is always its wearer's (entry_errors), so the person narrows the
    # search to the (person, wear start) index without losing an overlap.
    overlapping = sa.and_(DoseRecord.person_id == staged.c.person_id,
                          DoseRecord.dosimeter_id == staged.c.dosimeter_id,
                          DoseRecord.quantity == staged.c.quantity,
                          DoseRecord.wear_start <= staged.c.wear_end, staged.c.wear_start <= DoseRecord.wear_end)
    errors: dict[int, dict[str, str]] = {}
    for line, record_id in session.execute(
            sa.select(staged.c.line, DoseRecord.id).join(DoseRecord, same_key).where(staged.c.run == run, others)):
        errors.setdefault(line, {})[DUPLICATE] = duplicate_message(record_id)
    for line, record_id, start, end, quantity in session.execute(
            sa.select(staged.c.line, DoseRecord.id, DoseRecord.wear_start, DoseRecord.wear_end, staged.c.quantity)
            .join(DoseRecord, overlapping)
            .where(staged.c.run == run, staged.c.dosimeter_id.is_not(None), others)):
        errors.setdefault(line, {}).setdefault("wear_start", (
            f"This dosimeter already has a {quantity.value} result for {start} to {end} (record "
            f"#{record_id}), which overlaps this wear period: correct that record instead."))
    return errors


def _insert_batch(session: Session, preview: Preview, imported_by_id: int | None) -> int:
    """The batch's row, written without the ORM so that it waits for no lock (its audit event goes
    in with the rows'); refused when the same file went in a moment ago."""
    try:
        return session.connection().execute(sa.insert(ImportBatch.__table__).values(
            filename=preview.filename, sha256=preview.sha256, mapping_name=preview.layout.name,
            row_count=preview.row_count, imported_by_id=imported_by_id, imported_at=utcnow())).inserted_primary_key[0]
    except IntegrityError as error:
        raise Invalid.one("file", "This file has just been imported by someone else; nothing "
                                  "was added.") from error


def commit_report(session: Session, preview: Preview, *, imported_by_id: int | None = None) -> ImportBatch | None:
    """Add every row of a checked report as one batch; None when this file was imported before.

    Refuses the whole file when any row has an error, so a report goes in completely or not at all.
    The rows are checked again as they are written (a record added since the preview makes its row
    a repeat); on a refusal the caller rolls back.
    """
    if preview.earlier is not None:
        return None
    if preview.file_errors or not preview.row_count:
        raise Invalid.one("file", "The file cannot be read as a report; nothing was imported.")
    if preview.bad_count:
        raise Refused(preview)
    done = import_report(session, preview.data, preview.layout, preview.filename, imported_by_id=imported_by_id)
    if done.earlier is not None:
        raise Invalid.one("file", "This file has just been imported by someone else; nothing was added.")
    return done.batch
