"""`flask people add`: create people from scripts, the first admin included."""
from __future__ import annotations

import sys

import click

from models.core.codes import WorkerCategory
from models.core.errors import Invalid
from models.people.person_ops import add_person
from models.people.tables import PERSON_CATEGORIES, Role
from webapp.extensions import db
from webapp.passwords import MIN_LENGTH, hash_password
from webapp.people import bp


@bp.cli.command("add")
@click.argument("login")
@click.option("--name", required=True, help="Full name.")
@click.option("--email", default=None, help="E-mail address for reminders.")
@click.option("--role", "roles", multiple=True, default=["operator"], show_default=True,
              type=click.Choice([r.value for r in Role]), help="Repeat for several roles.")
@click.option("--category", default=WorkerCategory.ADULT_WORKER.value, show_default=True,
              type=click.Choice([c.value for c in PERSON_CATEGORIES]))
@click.option("--password-stdin", is_flag=True, help="Read the password from standard input.")
def add(login, name, email, roles, category, password_stdin):
    """Create a person; an existing login is an error."""
    password_hash = None
    if password_stdin:
        password = sys.stdin.readline().rstrip("\n")
        if len(password) < MIN_LENGTH:
            raise click.ClickException(f"The password must have at least {MIN_LENGTH} characters.")
        password_hash = hash_password(password)
    try:
        person = add_person(db.session, login=login, name=name, email=email,
                            roles={Role(r) for r in roles}, category=WorkerCategory(category),
                            password_hash=password_hash)
    except Invalid as error:
        db.session.rollback()
        raise click.ClickException(str(error)) from error
    db.session.commit()
    click.echo(f"Added {person.name} ({person.login}): {', '.join(sorted(roles))}.")
