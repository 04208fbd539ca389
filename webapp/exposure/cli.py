"""`flask exposure show`, `review` and `refresh`: the evaluation for scripts and for cron."""
from __future__ import annotations

import json
from datetime import date

import click

from models.core.codes import PeriodKind, Series, code
from models.core.labels import (
    LENS_LABELS,
    LEVEL_LABELS,
    LOCATION_LABELS,
    MRD_LABELS,
    PERIOD_LABELS,
    PRORATION_LABELS,
    SERIES_LABELS,
)
from models.core.settings import lab_settings
from models.core.units import from_msv
from models.exposure.evaluation import person_rows
from models.exposure.figures_ops import lab_evaluation, refresh_figures
from models.exposure.investigation_ops import review_after_dose_change
from models.exposure.lab_ops import LabEvaluation
from models.exposure.rules_ops import rules_on
from models.people.person_ops import find_person
from webapp.exposure import bp
from webapp.exposure.notify import tell_about
from webapp.extensions import db
from webapp.formatting import lab_today
from webapp.mail import deliver_queued

NOT_OFFICIAL = ("These figures are computed from the records in this logbook; they are not the "
                "official dose record.")


@bp.cli.command("show")
@click.option("--person", "login", required=True, help="The person's login.")
@click.option("--on", "on", type=click.DateTime(formats=["%Y-%m-%d"]), default=None,
              help="Evaluation date, YYYY-MM-DD (default: today in the lab's time zone).")
@click.option("--json", "as_json", is_flag=True, help="Print a JSON list, one object per row.")
def show(login: str, on, as_json: bool):
    """Print a person's doses against the limits in force on a date."""
    person = find_person(db.session, login)
    if person is None:
        raise click.ClickException(f"No person has the login '{login}'.")
    on = on.date() if on else lab_today()
    lab = lab_evaluation(db.session, on, [person.id])
    rows = evaluation_rows(lab, person.id)
    if as_json:
        click.echo(json.dumps(rows, indent=2))
        return
    click.echo(_header(person.name, person.login, on))
    click.echo(_table(rows, lab_settings(db.session).display_unit))


def evaluation_rows(lab: LabEvaluation, person_id: int) -> list[dict]:
    """The person's rows, each with the count of results still missing from its window."""
    row = lab.row_of(person_id)
    rows = person_rows(lab.evaluation, row)
    missing = lab.totals.missing
    for item in rows:
        item["limit_set"] = lab.evaluation.limit_set.name
        item["missing_results"] = int(
            missing[row, code(Series(item["series"])), code(PeriodKind(item["period"]))])
    return rows


def _header(name: str, login: str, on: date) -> str:
    """Who, when, and the limit set and counting policies in force on that date."""
    limit_set, policies = rules_on(db.session, on)
    return "\n".join([
        f"Dose evaluation for {name} ({login}) on {on.isoformat()}",
        f"Limit set:  {limit_set.name}",
        f"Proration:  {PRORATION_LABELS[policies.proration]}",
        f"MRD policy: {MRD_LABELS[policies.mrd]}",
        f"Lens:       {LENS_LABELS[policies.lens_source]}",
        NOT_OFFICIAL,
        "",
    ])


def _table(rows: list[dict], unit: str) -> str:
    """The rows as an aligned text table in the lab's display unit."""
    factor = from_msv(1.0, unit)
    digits = 1 if unit == "mrem" else 3

    def amount(value: float | None) -> str:
        return "-" if value is None else f"{value * factor:.{digits}f}"

    headings = ("For", "Quantity", "Location", "Period", "From", "To", f"Dose {unit}", f"Limit {unit}",
                "Used", f"Remaining {unit}", "Level", f"Projected {unit}", "Missing")
    lines = [
        (SERIES_LABELS[r["series"]], r["quantity"], LOCATION_LABELS[r["location"]], PERIOD_LABELS[r["period"]], r["start"],
         r["end"], amount(r["dose_msv"]), amount(r["limit_msv"]),
         "-" if r["fraction"] is None else f"{100 * r['fraction']:.1f} %",
         amount(r["remaining_msv"]), LEVEL_LABELS[r["level"]], amount(r["projected_msv"]),
         str(r["missing_results"]) if r["missing_results"] else "")
        for r in rows
    ]
    widths = [max(len(cell) for cell in column) for column in zip(headings, *lines)]
    numeric = {6, 7, 8, 9, 11, 12}

    def render(cells) -> str:
        return "  ".join(c.rjust(w) if i in numeric else c.ljust(w)
                         for i, (c, w) in enumerate(zip(cells, widths))).rstrip()

    rule = "  ".join("-" * w for w in widths)
    return "\n".join([render(headings), rule, *(render(line) for line in lines)])


@bp.cli.command("review")
@click.option("--on", "on", type=click.DateTime(formats=["%Y-%m-%d"]), default=None,
              help="Evaluation date, YYYY-MM-DD (default: today in the lab's time zone).")
def review(on):
    """Raise investigations for new level crossings, e-mail them, ask for surveys (for cron)."""
    raised = review_after_dose_change(db.session, on.date() if on else lab_today())
    tell_about(raised)  # queued with the change, sent after the commit
    db.session.commit()
    deliver_queued()
    click.echo(f"{len(raised)} new investigation(s) raised.")


@bp.cli.command("refresh")
def refresh():
    """Evaluate everyone today and store the figures the pages read (after an upgrade, say)."""
    lab = refresh_figures(db.session, lab_today())
    db.session.commit()
    click.echo(f"Stored the figures of {len(lab.person_ids)} people for {lab.on}.")
