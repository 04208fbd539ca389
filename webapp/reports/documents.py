"""The documents a safety officer is asked for: a person's annual dose statement (PDF)."""
from __future__ import annotations

from datetime import date

from models.core.base import utcnow
from models.core.codes import Level, PeriodKind, Series
from models.core.labels import LENS_LABELS, MRD_LABELS, PRORATION_LABELS
from models.core.settings import LabSettings
from models.doses.tables import DoseRecord, DoseSource
from models.doses.version_ops import record_versions
from models.exposure.lab_ops import cached_lab_evaluation
from models.people.tables import Person
from webapp.exposure import labels
from webapp.exposure.pages import person_table
from webapp.extensions import db
from webapp.formatting import lab_today, local, settings
from webapp.reports.pdf import Document, Provenance

ESTIMATES = (DoseSource.RSO_ESTIMATE, DoseSource.INCIDENT_ESTIMATE)


def statement_date(year: int, today: date) -> date:
    """The day a year's statement is evaluated on: 31 December, or today while the year runs."""
    return min(date(year, 12, 31), today)


def provenance(lab: LabSettings, period: str, limit_set: str, made_at: str, made_by: str) -> Provenance:
    """The heading block every document carries."""
    return Provenance(lab.lab_name, period, limit_set,
                      (PRORATION_LABELS[lab.proration], MRD_LABELS[lab.mrd_policy], LENS_LABELS[lab.lens_source]),
                      made_at, made_by)


def _msv(value: float | None, digits: int = 3) -> str:
    return "—" if value is None else f"{value:.{digits}f}"


def _in_year(record: DoseRecord, year: int) -> bool:
    return record.wear_start <= date(year, 12, 31) and record.wear_end >= date(year, 1, 1)


def _record_row(record: DoseRecord, current: bool) -> list:
    value = _msv(record.value_msv) if record.value_msv is not None else ""
    return [f"{record.wear_start} – {record.wear_end}", record.quantity.value,
            labels.LOCATION[record.location], labels.RESULT[record.result.value], value,
            _msv(record.mrd_msv) if record.mrd_msv is not None else "",
            labels.SOURCE[record.source.value], f"v{record.version}{'' if current else ' (replaced)'}",
            record.reason or ""]


def person_statement(person: Person, year: int, made_by: str, now_text: str) -> bytes:
    """The annual dose statement: figures as on the exposure page, every record and version."""
    on = statement_date(year, lab_today())
    lab = cached_lab_evaluation(db.session, on)
    rows = person_table(lab, person.id)
    doc = Document(f"Annual dose statement {year}: {person.name}",
                   provenance(settings(), f"Calendar year {year}, figures as on {on}",
                              lab.evaluation.limit_set.name, now_text, made_by))
    doc.paragraph(f"Person: {person.name} (login {person.login}), worker category "
                  f"{labels.CATEGORY[person.category]}.")
    doc.section(f"Dose by quantity and period on {on}")
    doc.rows_table(
        ("Quantity", "Period", "From", "To", "Dose mSv", "Limit mSv", "% of limit", "Level", "Missing"),
        [(labels.SERIES[Series(r["series"])], labels.PERIOD[PeriodKind(r["period"])], r["start"], r["end"],
          _msv(r["dose_msv"]), _msv(r["limit_msv"], 1),
          "—" if r["fraction"] is None else f"{100 * r['fraction']:.1f}",
          labels.LEVEL.get(Level(r["level"]), r["level"]), r["missing"] or "")
         for r in rows],
        widths=(34, 26, 18, 18, 16, 16, 14, 22, 14), empty="No dose records and no limits apply.")
    chains = [c for c in record_versions(db.session, person.id) if any(_in_year(r, year) for r in c)]
    doc.section(f"Dose records of {year}, with every version")
    doc.rows_table(("Wear period", "Quantity", "Where", "Result", "mSv", "MRD", "Source", "Version", "Reason"),
                   [_record_row(r, i == 0) for chain in chains for i, r in enumerate(chain)],
                   widths=(38, 15, 18, 17, 13, 11, 25, 17, 26), empty="No dose records for this year.")
    estimates = [chain[0] for chain in chains if chain[0].source in ESTIMATES]
    doc.section("Estimates and their basis")
    doc.rows_table(("Wear period", "Quantity", "mSv", "Source", "Basis"),
                   [(f"{r.wear_start} – {r.wear_end}", r.quantity.value, _msv(r.value_msv),
                     labels.SOURCE[r.source.value], r.basis or "") for r in estimates],
                   widths=(32, 18, 16, 34, 80), empty="No estimates this year.")
    missing = [chain[0] for chain in chains if chain[0].value_msv is None
               and chain[0].result.value in ("lost", "not_returned")]
    doc.section("Missing results")
    doc.rows_table(("Wear period", "Quantity", "Where", "Result"),
                   [(f"{r.wear_start} – {r.wear_end}", r.quantity.value, labels.LOCATION[r.location],
                     labels.RESULT[r.result.value]) for r in missing],
                   widths=(40, 30, 40, 70),
                   empty="No lost or unreturned dosimeters without an estimate this year.")
    if missing:
        doc.caution("Lost or unreturned results count as no dose until the safety officer enters an "
                    "estimate with its basis: the figures above may be too low.")
    return doc.bytes()


def made_now() -> str:
    """The moment a document is made, in the lab's zone."""
    return local(utcnow(), "%Y-%m-%d %H:%M %Z")
