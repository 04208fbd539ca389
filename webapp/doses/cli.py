"""`flask doses import`: the same import as the browser's, for scripts."""
from __future__ import annotations

import os

import click
import sqlalchemy as sa

from models.core.errors import Invalid
from models.doses.import_ops import PRODUCT_LAYOUT, Preview, Refused, import_report, layout_of, validate_report
from models.doses.tables import ImportMapping
from models.exposure.investigation_ops import investigation_label, review_after_dose_change
from webapp.doses import bp
from webapp.exposure.notify import tell_about
from webapp.extensions import db
from webapp.formatting import lab_today
from webapp.mail import deliver_queued


@bp.cli.command("import")
@click.argument("file", type=click.Path(exists=True, dir_okay=False))
@click.option("--mapping", default=None, help="Name of a saved column mapping; without it the "
                                               "logbook's own CSV layout is read.")
@click.option("--dry-run", is_flag=True, help="Check every row and write nothing.")
def import_command(file, mapping, dry_run):
    """Import a dosimetry report: every row, or none when any row has an error."""
    layout = PRODUCT_LAYOUT
    if mapping:
        saved = db.session.scalar(sa.select(ImportMapping).where(ImportMapping.name == mapping))
        if saved is None:
            names = db.session.scalars(sa.select(ImportMapping.name).order_by(ImportMapping.name)).all()
            raise click.ClickException(f"No mapping named '{mapping}'. Saved mappings: "
                                       f"{', '.join(names) or 'none'}.")
        layout = layout_of(saved)
    with open(file, "rb") as report:
        data = report.read()
    name = os.path.basename(file)
    try:
        preview = (validate_report if dry_run else import_report)(db.session, data, layout, name)
    except Refused as refused:
        db.session.rollback()
        _refuse(refused.preview)
    except Invalid as error:
        db.session.rollback()
        raise click.ClickException(" ".join(error.errors.values())) from error
    if preview.earlier is not None:
        click.echo(f"Already imported as batch #{preview.earlier.id} on "
                   f"{preview.earlier.imported_at:%Y-%m-%d}; nothing added.")
        return
    if dry_run:
        if not preview.ready:
            _refuse(preview)
        click.echo(f"All {preview.row_count} rows are valid; nothing written (dry run).")
        return
    raised = review_after_dose_change(db.session, lab_today())
    tell_about(raised)  # queued with the change, sent after the commit
    db.session.commit()
    deliver_queued()
    click.echo(f"Imported {preview.batch.row_count} dose records as batch #{preview.batch.id}.")
    for investigation in raised:
        click.echo(f"Investigation raised: {investigation_label(investigation)} "
                   f"({investigation.person.name}).")


def _refuse(preview: Preview) -> None:
    """Print the first problems and stop with the count of rows in error."""
    for line in preview.problems():
        click.echo(line)
    bad = f"{preview.bad_count} of {preview.row_count} rows have errors" if preview.row_count \
        else "The file cannot be read"
    raise click.ClickException(f"{bad}; nothing imported.")
