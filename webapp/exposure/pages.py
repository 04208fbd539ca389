"""Exposure pages: a person's dose page and chart, the operator's gauges, the people overview."""
from __future__ import annotations

import csv
import io
from datetime import date

import numpy as np
import sqlalchemy as sa
from flask import Response, abort, redirect, render_template, request, url_for
from flask_login import current_user, login_required

from models.core.codes import Level, PeriodKind, Series, code
from models.core.units import from_msv
from models.doses.tables import DoseRecord
from models.doses.version_ops import record_versions
from models.exposure.chart import engine_records, fetal_months, monthly_dose
from models.exposure.evaluation import UNASSESSED, person_rows
from models.exposure.figures_ops import lab_evaluation
from models.exposure.lab_ops import pregnancy_windows
from models.exposure.overview import COLUMNS, MAIN_SERIES, OVERVIEW_PERIODS, csv_table, overview_rows, sort_rows
from models.exposure.rules_ops import rules_on
from models.people.tables import Person, Role
from webapp.access import can_see_dose_of, roles_required
from webapp.exposure import bp, labels
from webapp.exposure.chart import monthly_chart_svg
from webapp.exposure.chart_cache import chart_version, charts
from webapp.extensions import db
from webapp.formatting import capfirst, lab_today, settings
from webapp.slots import home_panels, navigation

GAUGE_SERIES = (Series.EFFECTIVE, Series.SKIN, Series.LENS, Series.LEFT_HAND, Series.RIGHT_HAND)
EARLIEST_YEAR, LATEST_YEAR = 1950, 2200

navigation.add("My dose", "exposure.me", {Role.OPERATOR}, order=39)
navigation.add("People's dose", "exposure.people", {Role.SAFETY_OFFICER}, order=42)


def _evaluation_date() -> tuple[date, str | None]:
    """The lab's today, or the safety officer's `?on=` date; a bad date gives a message instead."""
    text = request.args.get("on", "").strip()
    if not text or not current_user.has_role(Role.SAFETY_OFFICER):
        return lab_today(), None
    try:
        on = date.fromisoformat(text)
    except ValueError:
        return lab_today(), f"'{text}' is not a date (use YYYY-MM-DD); showing today instead."
    if not EARLIEST_YEAR <= on.year <= LATEST_YEAR:
        return lab_today(), f"Choose a date between {EARLIEST_YEAR} and {LATEST_YEAR}; showing today."
    return on, None


def _subject(person_id: int) -> Person:
    """The person whose dose is asked for, if the viewer may see it (403 before 404: an operator
    guessing ids learns nothing about who exists)."""
    if not can_see_dose_of(person_id):
        abort(403)
    return db.session.get(Person, person_id) or abort(404)


def _display() -> tuple[str, float]:
    """The display unit and how many of it make one mSv."""
    unit = settings().display_unit
    return unit, from_msv(1.0, unit)


def _optional(value) -> float | None:
    """A float, or None for NaN (not set)."""
    return None if np.isnan(value) else float(value)


def person_table(lab, person_id: int) -> list[dict]:
    """The person's evaluation rows with their investigation levels and missing-result counts."""
    row = lab.row_of(person_id)
    rows = person_rows(lab.evaluation, row)
    for r in rows:
        at = (row, code(Series(r["series"])), code(PeriodKind(r["period"])))
        r["missing"] = int(lab.totals.missing[at])
        r["level1_msv"] = _optional(lab.evaluation.level1[at])
        r["level2_msv"] = _optional(lab.evaluation.level2[at])
    return rows


def compact_table(rows: list[dict]) -> dict:
    """Series by period for the periods that have a rule in the set, in the engine's order."""
    periods = list(dict.fromkeys(r["period"] for r in rows if r["clause"]))
    series = list(dict.fromkeys(r["series"] for r in rows))
    cells = {(r["series"], r["period"]): r for r in rows}
    return {"periods": periods, "series": series, "cells": cells,
            "hidden": len({r["period"] for r in rows}) - len(periods)}


def chart_series(rows: list[dict]) -> list[Series]:
    """The series the chart can show: each one the person's table has, the fetus aside."""
    return [s for s in dict.fromkeys(Series(r["series"]) for r in rows) if s != Series.FETUS]


def _chosen_series(rows: list[dict]) -> Series:
    """The series asked for by `?series=`, whole body when absent or not one of the person's."""
    wanted = request.args.get("series", "")
    return next((s for s in chart_series(rows) if s.value == wanted), Series.EFFECTIVE)


@bp.route("/exposure/me")
@login_required
def me():
    """The logged-in person's own exposure page."""
    return redirect(url_for("exposure.person", person_id=current_user.id))


@bp.route("/exposure/person/<int:person_id>")
@login_required
def person(person_id: int):
    """The table of quantities x periods, the chart, the records with their versions."""
    subject = _subject(person_id)
    on, date_problem = _evaluation_date()
    lab = lab_evaluation(db.session, on, [person_id])
    _, policies = rules_on(db.session, on)
    rows = person_table(lab, person_id)
    chains = record_versions(db.session, person_id)
    fetal = None
    fetal_row = next((r for r in rows if r["series"] == Series.FETUS), None)
    if fetal_row is not None:
        start, end = pregnancy_windows(db.session, np.array([person_id]), on,
                                       lab.evaluation.limit_set.whole_pregnancy)
        ended = None if np.isnat(end[0]) else end[0].astype(date)
        fetal = fetal_months(engine_records([c[0] for c in chains]), on,
                             policies, start[0].astype(date), ended)
    return render_template(
        "exposure/page_person.html", subject=subject, on=on, date_problem=date_problem,
        rows=rows, chains=chains, fetal=fetal, fetal_row=fetal_row, labels=labels,
        compact=compact_table(rows), chart_choices=chart_series(rows),
        chart_series=_chosen_series(rows),
        at_level=[r for r in rows if r["level"] not in (Level.BELOW_1, *UNASSESSED)],
        projected=[r for r in rows if r["clause"] and r["projected_level"] != r["level"]],
        lab=settings(), policies=policies, limit_set_name=lab.evaluation.limit_set.name,
        whole_pregnancy=lab.evaluation.limit_set.whole_pregnancy,
        is_today=on == lab_today(), Series=Series, PeriodKind=PeriodKind)


@bp.route("/exposure/person/<int:person_id>/chart.svg")
@login_required
def chart(person_id: int):
    """One series' monthly dose over two years (whole body unless `?series=` names another),
    the year's total and the annual limit.

    Drawn once per person, date, series and version of the inputs; a client holding that version gets 304.
    """
    _subject(person_id)
    on, _ = _evaluation_date()
    version = chart_version(db.session, person_id, on)
    wanted = request.args.get("series", "")[:32]
    etag = f"{person_id}-{on}-{wanted}-{version}"
    if etag in request.if_none_match:
        response = Response(status=304)
    else:
        response = Response(charts.get((person_id, on, wanted, version), lambda: _draw_chart(person_id, on)),
                            mimetype="image/svg+xml")
    response.set_etag(etag)
    response.headers["Cache-Control"] = "private, no-store"
    return response


def _draw_chart(person_id: int, on: date) -> str:
    """The chart's SVG, from the person's records and the lab's evaluation on `on`."""
    lab = lab_evaluation(db.session, on, [person_id])
    rows = person_rows(lab.evaluation, lab.row_of(person_id))
    series = _chosen_series(rows)
    annual = next((r for r in rows if r["series"] == series and r["period"] == PeriodKind.YEAR),
                  None)
    records = engine_records([c[0] for c in record_versions(db.session, person_id)])
    data = monthly_dose(records, on, rules_on(db.session, on)[1], series)
    unit, per_msv = _display()
    return monthly_chart_svg(data, annual and annual["limit_msv"], unit, per_msv,
                             f"{capfirst(labels.SERIES[series])}, month by month to {on}")


@home_panels.add("exposure/page_home_gauges.html", roles={Role.OPERATOR}, order=30)
def gauges(viewer: Person) -> dict:
    """My dose per series: share of the annual limit, and the worst level over its periods."""
    lab = lab_evaluation(db.session, lab_today())
    rows = person_rows(lab.evaluation, lab.row_of(viewer.id))
    shown = []
    for series in GAUGE_SERIES:
        own = [r for r in rows if r["series"] == series]
        year = next((r for r in own if r["period"] == PeriodKind.YEAR), None)
        assessed = [r for r in own if r["level"] not in UNASSESSED]
        worst = max(assessed, key=lambda r: (code(Level(r["level"])), r["fraction"] or 0.0), default=year)
        if year is not None:
            shown.append({"series": series, "year": year, "worst": worst})
    return {"gauges": shown, "labels": labels}


def _overview(key: str, descending: bool):
    """Everyone who works with dose (operators, and anyone with a record) as overview lines."""
    lab = lab_evaluation(db.session, lab_today())
    people = db.session.execute(
        sa.select(Person.id, Person.login, Person.name).where(
            sa.or_(Person.roles.any(role=Role.OPERATOR),
                   sa.exists().where(DoseRecord.person_id == Person.id)))
        .order_by(Person.name)).all()
    rows = np.array([lab.row_of(p.id) for p in people], dtype=np.int64)
    lines = overview_rows(lab.evaluation, rows, [tuple(p) for p in people])
    return lab, sort_rows(lines, key, descending)


@bp.route("/exposure/people")
@roles_required(Role.SAFETY_OFFICER)
def people():
    """People x main series for the year and quarter, sortable."""
    key = request.args.get("sort", "level")
    descending = request.args.get("order", "desc" if key != "name" else "asc") == "desc"
    lab, lines = _overview(key, descending)
    return render_template("exposure/page_people.html", lines=lines, key=key,
                           descending=descending, columns=COLUMNS, series=MAIN_SERIES,
                           periods=OVERVIEW_PERIODS, labels=labels, on=lab.on,
                           limit_set_name=lab.evaluation.limit_set.name,
                           policies=rules_on(db.session, lab.on)[1])


@bp.route("/exposure/people.csv")
@roles_required(Role.SAFETY_OFFICER)
def people_csv():
    """The overview as CSV, doses in mSv."""
    lab, lines = _overview(request.args.get("sort", "name"), request.args.get("order") == "desc")
    buffer = io.StringIO()
    csv.writer(buffer).writerows(csv_table(lines))
    return Response(buffer.getvalue(), mimetype="text/csv", headers={
        "Content-Disposition": f'attachment; filename="dose-overview-{lab.on}.csv"',
        "Cache-Control": "private, no-store"})
