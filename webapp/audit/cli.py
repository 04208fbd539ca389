"""`flask audit verify`: check that no audit event was altered or removed."""
import click

from models.audit.audit_ops import verify_chain
from webapp.audit import bp
from webapp.extensions import db


@bp.cli.command("verify")
def verify():
    """Walk the hash chain; exit 1 and name the first broken event if there is one."""
    problem = verify_chain(db.session)
    if problem is None:
        click.echo("The audit trail is intact.")
        return
    click.echo(f"The audit trail is broken: {problem.message}.", err=True)
    raise SystemExit(1)
