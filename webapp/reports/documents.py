"""The documents a safety officer is asked for: annual dose statements and the lab's year (PDF)."""
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
from models.reports.year_ops import BAND_NAMES, LabYear, lab_year
from webapp.exposure import labels
from webapp.exposure.pages import person_table
from webapp.extensions import db
from webapp.formatting import lab_today, lab_zone, local, settings
from webapp.reports.charts import bands_png, beam_hours_png
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


def year_figures(year: int) -> LabYear:
    """The lab's year, dose figures as on 31 December or today."""
    on = statement_date(year, lab_today())
    return lab_year(db.session, year, cached_lab_evaluation(db.session, on), lab_zone())


def _range(values: tuple[float, float] | None) -> str:
    return "—" if values is None else f"{values[0]:g}–{values[1]:g}"


def _service(periods) -> str:
    return "; ".join(f"{a} to {b or 'still out'}" for a, b in periods) or "—"


def lab_year_document(figures: LabYear, made_by: str, now_text: str) -> bytes:
    """The lab's year in figures, with its charts (PDF)."""
    doc = Document(f"The lab's year {figures.year}",
                   provenance(settings(), f"Calendar year {figures.year}, dose figures as on {figures.on}",
                              cached_lab_evaluation(db.session, figures.on).evaluation.limit_set.name,
                              now_text, made_by))
    doc.section("People monitored")
    doc.rows_table(("Worker category", "People"),
                   [(labels.CATEGORY[c], n) for c, n in sorted(figures.people_by_category.items())],
                   widths=(90, 30), empty="Nobody wore a dosimeter this year.")
    doc.section("Collective dose")
    doc.rows_table(("Quantity", "Person-mSv"),
                   [(labels.SERIES[s], f"{v:.3f}") for s, v in figures.collective_msv.items()],
                   widths=(90, 30))
    doc.section("Annual Hp(10) by band")
    doc.rows_table(("Band", "People"), list(zip(BAND_NAMES, figures.bands, strict=True)), widths=(90, 30))
    doc.paragraph("Highest annual Hp(10): " + ("—" if figures.highest_hp10_msv is None
                                               else f"{figures.highest_hp10_msv:.3f} mSv"))
    doc.chart(bands_png(figures))
    doc.section("Investigations")
    doc.paragraph(f"Raised in {figures.year}: {figures.investigations_raised}; signed off in "
                  f"{figures.year}: {figures.investigations_closed}.")
    doc.section("Instruments")
    doc.rows_table(
        ("Instrument", "Sessions", "Beam h", "kWh", "kV", "mA", "Alignment", "Under permit"),
        [(i.name, i.sessions, f"{i.beam_hours:.1f}", f"{i.energy_kwh:.2f}", _range(i.kv_range),
          _range(i.ma_range), i.alignment_sessions, i.permit_sessions) for i in figures.instruments],
        widths=(40, 18, 18, 18, 22, 22, 20, 22), empty="No instruments.")
    doc.rows_table(
        ("Instrument", "Checks", "Late", "Failed", "Surveys", "Worst net / level µSv/h", "Out of service",
         "Incidents"),
        [(i.name, i.checks, i.checks_late, i.checks_failed, i.surveys,
          "—" if i.worst_survey is None else f"{i.worst_survey[0]:.2f} / {i.worst_survey[1]:.1f}",
          _service(i.out_of_service), i.incidents) for i in figures.instruments],
        widths=(34, 15, 12, 14, 15, 30, 44, 16))
    doc.chart(beam_hours_png(figures))
    return doc.bytes()
