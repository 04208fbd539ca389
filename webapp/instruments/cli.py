"""`flask instruments token NAME`: make an API token for an instrument PC."""
from __future__ import annotations

import click
import sqlalchemy as sa

from models.core.errors import Invalid
from models.instruments.tables import Instrument
from models.instruments.token_ops import create_token
from webapp.extensions import db
from webapp.instruments import bp


@bp.cli.command("token")
@click.argument("name")
def token(name):
    """Make a token for the instrument called NAME and print it once."""
    instrument = db.session.scalar(sa.select(Instrument).where(Instrument.name == name))
    if instrument is None:
        raise click.ClickException(f"No instrument called '{name}'.")
    try:
        _row, secret = create_token(db.session, instrument)
    except Invalid as error:
        db.session.rollback()
        raise click.ClickException(str(error)) from error
    db.session.commit()
    click.echo(secret)
    click.echo(f"Token for {instrument.name}; it is shown only now. "
               "Send it as 'Authorization: Bearer <token>'.", err=True)
