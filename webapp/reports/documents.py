"""The documents a safety officer is asked for: annual dose statements and the lab's year (PDF)."""
from __future__ import annotations

from datetime import date, timedelta

from models.core.base import utcnow
from models.core.codes import PeriodKind, Series
from models.core.due_dates import calibration_due
from models.core.labels import LENS_LABELS, MRD_LABELS, PRORATION_LABELS
from models.doses.tables import DoseRecord, DoseSource
from models.doses.version_ops import record_versions
from models.exposure.figures_ops import lab_evaluation
from models.exposure.rules_ops import rules_on
from models.instruments.tables import KIND_LABELS
from models.people.tables import Person
from models.reports.instrument_file_ops import InstrumentFile
from models.reports.year_ops import BAND_NAMES, LabYear, lab_year
from webapp.exposure import labels
from webapp.exposure.pages import person_table
from webapp.extensions import db
from webapp.formatting import capfirst, lab_today, lab_zone, local, settings
from webapp.reports.charts import bands_png, beam_hours_png
from webapp.reports.pdf import Document, Provenance

ESTIMATES = (DoseSource.RSO_ESTIMATE, DoseSource.INCIDENT_ESTIMATE)


def statement_date(year: int, today: date) -> date:
    """The day a year's statement is evaluated on: 31 December, or today while the year runs."""
    return min(date(year, 12, 31), today)


def provenance(on: date, period: str, made_at: str, made_by: str) -> Provenance:
    """The heading block every document carries, with the limit set and policies in force on `on`."""
    limit_set, policies = rules_on(db.session, on)
    return Provenance(settings().lab_name, period, limit_set.name,
                      (PRORATION_LABELS[policies.proration], MRD_LABELS[policies.mrd],
                       LENS_LABELS[policies.lens_source]),
                      made_at, made_by)


def _msv(value: float | None, digits: int = 3) -> str:
    return "—" if value is None else f"{value:.{digits}f}"


def _in_year(record: DoseRecord, year: int) -> bool:
    return record.wear_start <= date(year, 12, 31) and record.wear_end >= date(year, 1, 1)


def _record_row(record: DoseRecord, current: bool) -> list:
    value = _msv(record.value_msv) if record.value_msv is not None else ""
    return [f"{record.wear_start} – {record.wear_end}", record.quantity.value,
            capfirst(labels.LOCATION[record.location]), capfirst(labels.RESULT[record.result.value]), value,
            _msv(record.mrd_msv) if record.mrd_msv is not None else "",
            capfirst(labels.SOURCE[record.source.value]), f"v{record.version}{'' if current else ' (replaced)'}",
            record.reason or ""]


def person_statement(person: Person, year: int, made_by: str, now_text: str) -> bytes:
    """The annual dose statement: figures as on the exposure page, every record and version."""
    on = statement_date(year, lab_today())
    lab = lab_evaluation(db.session, on, [person.id])
    rows = person_table(lab, person.id)
    doc = Document(f"Annual dose statement {year}: {person.name}",
                   provenance(on, f"Calendar year {year}, figures as on {on}", now_text, made_by))
    doc.paragraph(f"Person: {person.name} (login {person.login}), worker category "
                  f"{labels.CATEGORY[person.category]}.")
    doc.section(f"Dose by quantity and period on {on}")
    doc.rows_table(
        ("Quantity", "Period", "From", "To", "Dose mSv", "Limit mSv", "% of limit", "Level", "Missing"),
        [(capfirst(labels.SERIES[Series(r["series"])]), capfirst(labels.PERIOD[PeriodKind(r["period"])]),
          r["start"], r["end"],
          _msv(r["dose_msv"]), _msv(r["limit_msv"], 1),
          "—" if r["fraction"] is None else f"{100 * r['fraction']:.1f}",
          capfirst(labels.LEVEL.get(r["level"], r["level"])), r["missing"] or "")
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
                     capfirst(labels.SOURCE[r.source.value]), r.basis or "") for r in estimates],
                   widths=(32, 18, 16, 34, 80), empty="No estimates this year.")
    missing = [chain[0] for chain in chains if chain[0].value_msv is None
               and chain[0].result.value in ("lost", "not_returned")]
    doc.section("Missing results")
    doc.rows_table(("Wear period", "Quantity", "Where", "Result"),
                   [(f"{r.wear_start} – {r.wear_end}", r.quantity.value, capfirst(labels.LOCATION[r.location]),
                     capfirst(labels.RESULT[r.result.value])) for r in missing],
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
    return lab_year(db.session, year, lab_evaluation(db.session, on), lab_zone())


def _range(values: tuple[float, float] | None) -> str:
    return "—" if values is None else f"{values[0]:g}–{values[1]:g}"


def _service(periods) -> str:
    return "; ".join(f"{a} to {b or 'still out'}" for a, b in periods) or "—"


def lab_year_document(figures: LabYear, made_by: str, now_text: str) -> bytes:
    """The lab's year in figures, with its charts (PDF)."""
    doc = Document(f"The lab's year {figures.year}",
                   provenance(figures.on, f"Calendar year {figures.year}, dose figures as on {figures.on}",
                              now_text, made_by))
    doc.section("People monitored")
    doc.rows_table(("Worker category", "People"),
                   [(capfirst(labels.CATEGORY[c]), n) for c, n in sorted(figures.people_by_category.items())],
                   widths=(90, 30), empty="Nobody wore a dosimeter this year.")
    doc.section("Collective dose")
    doc.rows_table(("Quantity", "Person-mSv"),
                   [(capfirst(labels.SERIES[s]), f"{v:.3f}") for s, v in figures.collective_msv.items()],
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


def _flags(s) -> str:
    return ", ".join(f for f, on in (("alignment", s.alignment), ("bypass permit", s.bypass_permit_id),
                                     ("set-up changed", s.configuration_changed),
                                     ("no dosimeter", not s.dosimeter_worn)) if on)


def instrument_file_document(record: InstrumentFile, made_by: str, now_text: str) -> bytes:
    """An instrument's file for an inspection (PDF)."""
    i = record.instrument
    doc = Document(f"Instrument file: {i.name}",
                   provenance(statement_date(record.last.year, lab_today()), f"{record.first} to {record.last}",
                              now_text, made_by))
    doc.section("Ratings and set-up")
    doc.rows_table(("Property", "Value"), [
        ("Kind", KIND_LABELS[i.kind]), ("Room", i.room or "—"), ("Registration", i.registration_number or "—"),
        ("Anode", i.anode), ("Ratings", f"{i.max_kv:g} kV, {i.max_ma:g} mA, {i.max_power_w:g} W"),
        ("Enclosure", i.enclosure.value.replace("_", " ")),
        ("Check interval", f"{i.check_interval_days} days"), ("Survey interval", f"{i.survey_interval_days} days"),
        ("Action levels", f"outer surface {i.surface_action_level_usv_h:g} µSv/h, tube housing "
                          f"{i.housing_action_level_usv_h:g} µSv/h, at 5 cm"),
        ("Status now", "in service" if i.in_service else f"out of service: {i.out_of_service_reason}")],
        widths=(40, 140))
    doc.section("Authorised users")
    doc.rows_table(("Person", "Level", "Trained on", "Refresher due", "Granted", "Revoked"),
                   [(a.person.name, a.level.value, a.trained_on, a.refresher_due, local(a.granted_at, "%Y-%m-%d"),
                     local(a.revoked_at, "%Y-%m-%d") or "—") for a in record.authorisations],
                   widths=(45, 25, 25, 28, 25, 25), empty="Nobody was authorised in this period.")
    doc.section(f"Session log ({len(record.sessions)})")
    doc.rows_table(("Start", "End", "Operator", "kV", "mA", "Beam min", "Purpose", "Flags"),
                   [(local(s.started_at), local(s.ended_at) or "open", s.operator.name, f"{s.kv:g}", f"{s.ma:g}",
                     "" if s.beam_on_minutes is None else f"{s.beam_on_minutes:.0f}", s.purpose, _flags(s))
                    for s in record.sessions],
                   widths=(27, 27, 28, 9, 9, 12, 38, 30), empty="No sessions in this period.")
    doc.section(f"Safety-device checks ({len(record.checks)})")
    doc.rows_table(("Done", "By", "Item", "Result", "Comment"),
                   [(local(c.performed_at), c.performed_by.name, r.item_text, r.result.value, r.comment or "")
                    for c in record.checks for r in c.results],
                   widths=(26, 30, 74, 16, 34), empty="No checks in this period.")
    doc.section(f"Surveys ({len(record.surveys)})")
    for survey in record.surveys:
        meter = survey.meter
        valid_to = calibration_due(meter.calibrated_on, meter.calibration_interval_months)
        doc.paragraph(f"{local(survey.performed_at)}, {survey.trigger.value.replace('_', ' ')}, at {survey.kv:g} kV "
                      f"{survey.ma:g} mA: {'passed' if survey.passed else 'FAILED'}. Meter {meter.serial} "
                      f"calibrated {meter.calibrated_on}, valid through {valid_to - timedelta(days=1)}, "
                      f"correction factor {meter.correction_factor:g}.")
        doc.rows_table(("Point", "cm", "Reading", "Background", "Net µSv/h", "Level µSv/h", ""),
                       [(p.location, f"{p.distance_cm:g}", f"{p.reading_usv_h:.2f}", f"{p.background_usv_h:.2f}",
                         f"{p.net_usv_h:.2f}", f"{p.action_level_usv_h:g}",
                         "over" if p.net_usv_h > p.action_level_usv_h else "")
                        for p in survey.points], widths=(60, 12, 20, 22, 22, 24, 20))
    if not record.surveys:
        doc.paragraph("No surveys in this period.")
    doc.section(f"Bypass permits ({len(record.permits)})")
    doc.rows_table(("Window", "Devices", "Reason", "Status", "Closing survey"),
                   [(f"{local(p.window_start)} – {local(p.window_end)}", p.devices, p.reason, p.status.value,
                     "; ".join(f"{local(s.performed_at)} {'passed' if s.passed else 'failed'}" for s in closing)
                     or "none on record") for p, closing in record.permits],
                   widths=(40, 35, 45, 20, 40), empty="No bypass permits in this period.")
    doc.section(f"Incidents ({len(record.incidents)})")
    doc.rows_table(("When", "Type", "Description", "Closed"),
                   [(local(n.occurred_at), n.type.value.replace("_", " "), n.description,
                     local(n.closed_at) or "open") for n in record.incidents],
                   widths=(28, 30, 94, 28), empty="No incidents in this period.")
    doc.section("Out of service")
    doc.rows_table(("From", "Back in service"), [(a, b or "still out") for a, b in record.out_of_service],
                   widths=(40, 40), empty="In service throughout the period.")
    return doc.bytes()
