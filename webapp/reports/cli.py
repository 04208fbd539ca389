"""`flask export LIST`: any list as CSV, for scripts and archives."""
from __future__ import annotations

import click
import sqlalchemy as sa
from flask.cli import AppGroup

from models.core.settings import lab_zone
from models.instruments.tables import Instrument
from models.people.person_ops import find_person
from models.reports.csv_cells import csv_chunks
from models.reports.export_ops import LISTS, Filters, export_rows
from models.reports.instrument_file_ops import instrument_file
from webapp.extensions import db
from webapp.reports import bp
from webapp.reports.documents import (
    instrument_file_document,
    lab_year_document,
    made_now,
    person_statement,
    year_figures,
)
from webapp.reports.forms import FIRST_DAY, LAST_DAY

reports = AppGroup("reports", help="PDF documents: annual dose statements, the lab's year, an instrument's file.")
bp.cli.add_command(reports)


def _day(ctx, param, value):
    """A lab date between 1950 and 2100, or None."""
    if value is None:
        return None
    day = value.date()
    if not FIRST_DAY <= day <= LAST_DAY:
        raise click.BadParameter("give a date between 1950 and 2100")
    return day


@bp.cli.command("export")
@click.argument("list_name", metavar="LIST", type=click.Choice(sorted(LISTS)))
@click.option("--from", "first", type=click.DateTime(formats=["%Y-%m-%d"]), callback=_day,
              help="First lab date to include (wear end for dose records).")
@click.option("--to", "last", type=click.DateTime(formats=["%Y-%m-%d"]), callback=_day,
              help="Last lab date to include.")
@click.option("--out", "out", type=click.Path(dir_okay=False, writable=True), required=True,
              help="The CSV file to write.")
def export(list_name, first, last, out):
    """Write one list as CSV (times in the lab's zone; formula-like text made inert)."""
    if first and last and first > last:
        raise click.BadParameter("--from is after --to", param_hint="--from")
    export_list = LISTS[list_name]
    zone = lab_zone(db.session)
    rows = export_rows(db.session, export_list, Filters(first, last), zone=zone, with_dose_data=True)
    written = [0]

    def counted():
        for row in rows:
            written[0] += 1
            yield row

    with open(out, "w", encoding="utf-8", newline="") as handle:
        handle.writelines(csv_chunks(export_list.header, counted(), zone))
    click.echo(f"Wrote {export_list.title.lower()} to {out} ({written[0]} rows).")


@reports.command("person")
@click.argument("login")
@click.option("--year", type=click.IntRange(1950, 2100), required=True, help="The calendar year.")
@click.option("--out", type=click.Path(dir_okay=False, writable=True), required=True, help="The PDF file.")
def person_report(login, year, out):
    """Write a person's annual dose statement (PDF)."""
    person = find_person(db.session, login)
    if person is None:
        raise click.BadParameter(f"no person with login '{login}'", param_hint="LOGIN")
    with open(out, "wb") as handle:
        handle.write(person_statement(person, year, "the command line", made_now()))
    click.echo(f"Wrote the {year} dose statement of {person.name} to {out}.")


@reports.command("lab")
@click.option("--year", type=click.IntRange(1950, 2100), required=True, help="The calendar year.")
@click.option("--out", type=click.Path(dir_okay=False, writable=True), required=True, help="The PDF file.")
def lab_report(year, out):
    """Write the lab's year in figures (PDF)."""
    with open(out, "wb") as handle:
        handle.write(lab_year_document(year_figures(year), "the command line", made_now()))
    click.echo(f"Wrote the lab's year {year} to {out}.")


@reports.command("instrument")
@click.argument("name")
@click.option("--from", "first", type=click.DateTime(formats=["%Y-%m-%d"]), callback=_day, required=True,
              help="First lab date of the period.")
@click.option("--to", "last", type=click.DateTime(formats=["%Y-%m-%d"]), callback=_day, required=True,
              help="Last lab date of the period.")
@click.option("--out", type=click.Path(dir_okay=False, writable=True), required=True, help="The PDF file.")
def instrument_report(name, first, last, out):
    """Write an instrument's file for an inspection (PDF)."""
    if first > last:
        raise click.BadParameter("--from is after --to", param_hint="--from")
    instrument = db.session.scalar(sa.select(Instrument).where(Instrument.name == name))
    if instrument is None:
        raise click.BadParameter(f"no instrument named '{name}'", param_hint="NAME")
    record = instrument_file(db.session, instrument, first, last, lab_zone(db.session))
    with open(out, "wb") as handle:
        handle.write(instrument_file_document(record, "the command line", made_now()))
    click.echo(f"Wrote the file of {instrument.name} from {first} to {last} to {out}.")
