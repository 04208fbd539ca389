"""`flask audit verify` and `flask audit anchor`: check the trail, and print its head for keeping."""
import click

from models.audit import guards
from models.audit.verify_ops import Anchor, chain_head, row_problems, verify_anchor, verify_chain
from webapp.audit import bp
from webapp.extensions import db


@bp.cli.command("verify")
@click.option("--anchor", "anchor_file", type=click.File("r"), default=None,
              help="A file holding an anchor printed earlier by `flask audit anchor`.")
def verify(anchor_file):
    """Check the sealed chain, every stored row against it, the guards and an anchor; exit 1 on a problem."""
    problems = []
    if anchor_file is not None:
        anchor = Anchor.parse(anchor_file.read())
        if anchor is None:
            raise click.BadParameter("the file holds no 'audit-anchor count=… last=… hash=…' line",
                                     param_hint="--anchor")
        if found := verify_anchor(db.session, anchor):
            problems.append(found.message)
    if found := verify_chain(db.session):
        problems.append(found.message)
    problems += row_problems(db.session)
    problems += [f"the guard trigger {name} is missing or disabled"
                 for name in guards.missing(db.session.connection())]
    if not problems:
        head = chain_head(db.session)
        click.echo(f"The audit trail is intact: {head.count} events, every stored row as recorded.")
        return
    click.echo("The audit trail is broken:", err=True)
    for problem in problems:
        click.echo(f"- {problem}", err=True)
    raise SystemExit(1)


@bp.cli.command("anchor")
def anchor():
    """Print the head of the trail (count, newest event, hash) to keep outside the database."""
    click.echo(chain_head(db.session).line())
