"""The export page and one CSV download per list."""
from __future__ import annotations

import io
import zipfile

from flask import Response, abort, redirect, render_template, request, stream_with_context, url_for
from flask_login import current_user, login_required

from models.instruments.tables import Instrument
from models.people.tables import Person, Role
from models.reports.csv_cells import csv_chunks
from models.reports.export_ops import LISTS, ExportList, export_rows
from models.reports.instrument_file_ops import instrument_file
from models.reports.year_ops import BAND_NAMES, people_monitored
from webapp.access import can_see_dose_of, roles_required
from webapp.exposure import labels
from webapp.extensions import db
from webapp.formatting import lab_today, lab_zone
from webapp.reports import bp
from webapp.reports.charts import bands_png, beam_hours_png
from webapp.reports.documents import (
    instrument_file_document,
    lab_year_document,
    made_now,
    person_statement,
    year_figures,
)
from webapp.reports.forms import ExportForm
from webapp.slots import instrument_sections, navigation

EXPORTERS = (Role.SAFETY_OFFICER, Role.ADMIN)

navigation.add("Exports", "reports.exports", set(EXPORTERS), order=93)
navigation.add("Year", "reports.this_year", {Role.SAFETY_OFFICER}, order=92)


def _allowed(export: ExportList) -> bool:
    """Dose lists only for the safety officer; the rest for the safety officer and the admin."""
    return current_user.has_role(Role.SAFETY_OFFICER) or not export.dose_data


@bp.route("/exports/")
@roles_required(*EXPORTERS)
def exports():
    """Every list the viewer may export, with a date range."""
    form = ExportForm(request.args)
    form.validate()
    shown = [e for e in LISTS.values() if _allowed(e)]
    return render_template("reports/exports.html", form=form, lists=shown, args=request.args)


def _rows(export: ExportList, form: ExportForm):
    """The list's rows for this viewer and these filters."""
    return export_rows(db.session, export,
                       form.filters(request.args.get("instrument", type=int),
                                    request.args.get("person", type=int)),
                       zone=lab_zone(), with_dose_data=current_user.has_role(Role.SAFETY_OFFICER))


@bp.route("/exports/<name>.csv")
@roles_required(*EXPORTERS)
def export_csv(name: str):
    """One list as CSV, with the list's filters from the query string."""
    export = LISTS.get(name) or abort(404)
    if not _allowed(export):
        abort(403)
    form = ExportForm(request.args)
    if not form.validate():
        return render_template("reports/exports.html", form=form,
                               lists=[e for e in LISTS.values() if _allowed(e)], args=request.args), 422
    filename = f"{name}-{lab_today().isoformat()}.csv"
    return Response(stream_with_context(csv_chunks(export.header, _rows(export, form), lab_zone())), mimetype="text/csv",
                    headers={"Content-Disposition": f'attachment; filename="{filename}"'})


def _year(year: int) -> int:
    """A statement year within the logbook's range, else 404."""
    if not 1950 <= year <= 2100:
        abort(404)
    return year


def _pdf(data: bytes, filename: str) -> Response:
    """A PDF download that no shared cache keeps (it carries personal dose data)."""
    return Response(data, mimetype="application/pdf", headers={
        "Content-Disposition": f'attachment; filename="{filename}"', "Cache-Control": "private, no-store"})


@bp.route("/reports/person/<int:person_id>/<int:year>.pdf")
@login_required
def statement(person_id: int, year: int):
    """A person's annual dose statement: for the person themselves and the safety officer."""
    if not can_see_dose_of(person_id):
        abort(403)
    person = db.session.get(Person, person_id) or abort(404)
    data = person_statement(person, _year(year), current_user.name, made_now())
    return _pdf(data, f"dose-statement-{person.login}-{year}.pdf")


@bp.route("/reports/statements/<int:year>.zip")
@roles_required(Role.SAFETY_OFFICER)
def statements(year: int):
    """Every monitored person's statement for a year, one ZIP."""
    buffer = io.BytesIO()
    made = made_now()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        for person in people_monitored(db.session, _year(year)):
            archive.writestr(f"dose-statement-{person.login}-{year}.pdf",
                             person_statement(person, year, current_user.name, made))
    return Response(buffer.getvalue(), mimetype="application/zip", headers={
        "Content-Disposition": f'attachment; filename="dose-statements-{year}.zip"',
        "Cache-Control": "private, no-store"})


@bp.route("/reports/year/<int:year>")
@roles_required(Role.SAFETY_OFFICER)
def lab_year_page(year: int):
    """The lab's year in figures, with charts and the PDF."""
    figures = year_figures(_year(year))
    return render_template("reports/year.html", figures=figures, year=year, labels=labels,
                           band_names=BAND_NAMES)


@bp.route("/reports/year/<int:year>/<chart>.png")
@roles_required(Role.SAFETY_OFFICER)
def lab_year_chart(year: int, chart: str):
    """One chart of the lab's year."""
    draw = {"bands": bands_png, "beam-hours": beam_hours_png}.get(chart) or abort(404)
    return Response(draw(year_figures(_year(year))), mimetype="image/png",
                    headers={"Cache-Control": "private, no-store"})


@bp.route("/reports/year/<int:year>.pdf")
@roles_required(Role.SAFETY_OFFICER)
def lab_year_pdf(year: int):
    """The lab's year as PDF."""
    return _pdf(lab_year_document(year_figures(_year(year)), current_user.name, made_now()),
                f"lab-year-{year}.pdf")


@bp.route("/reports/year/")
@roles_required(Role.SAFETY_OFFICER)
def this_year():
    """The current year's figures so far."""
    return redirect(url_for("reports.lab_year_page", year=lab_today().year))


@instrument_sections.add("reports/_instrument_file.html", roles=set(EXPORTERS), order=95)
def _instrument_file_form(instrument: Instrument) -> dict:
    """The form that asks for an instrument's file for a period."""
    today = lab_today()
    return {"instrument": instrument, "first": today.replace(month=1, day=1), "last": today}


@bp.route("/reports/instrument/<int:instrument_id>.pdf")
@roles_required(*EXPORTERS)
def instrument_file_pdf(instrument_id: int):
    """An instrument's file for an inspection, for the period asked."""
    instrument = db.session.get(Instrument, instrument_id) or abort(404)
    form = ExportForm(request.args)
    if not form.validate() or not (form.first.data and form.last.data):
        if not form.first.errors and not form.last.errors:
            form.first.errors = ["Give the first and the last day of the period."]
        return render_template("reports/exports.html", form=form,
                               lists=[e for e in LISTS.values() if _allowed(e)], args=request.args), 422
    record = instrument_file(db.session, instrument, form.first.data, form.last.data, lab_zone())
    return _pdf(instrument_file_document(record, current_user.name, made_now()),
                f"instrument-file-{instrument.id}-{form.first.data}-{form.last.data}.pdf")
