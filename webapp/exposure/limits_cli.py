"""`flask limits list|use|policies` and the default limit set a new database gets on `flask db upgrade`."""
from __future__ import annotations

import click
import flask_migrate
import sqlalchemy as sa
from flask import Flask, current_app
from flask.cli import with_appcontext

from models.core.codes import LensSource, MrdPolicy, Proration
from models.core.errors import Invalid
from models.core.settings import lab_settings
from models.exposure import presets
from models.exposure.investigation_ops import review_after_dose_change
from models.exposure.limit_set_ops import install_preset
from models.exposure.rules_ops import choose_limit_set, install_default, rules_on, set_policies
from models.exposure.tables import LimitSet
from webapp.exposure.notify import tell_about
from webapp.extensions import db
from webapp.formatting import lab_today
from webapp.mail import deliver_queued

limits = click.Group("limits", help="The limit set in force: list the sets, choose one.")


_OPTIONS = {"from_on": "--from", "reason": "--reason"}


def _fail(error: Invalid) -> click.ClickException:
    """A CLI error naming each field (as its option where it has one)."""
    return click.ClickException("; ".join(f"{_OPTIONS.get(field, field)}: {message}"
                                          for field, message in error.errors.items()))


@limits.command("list")
@with_appcontext
def list_sets():
    """Every preset and saved set; the one in force is marked with '*'."""
    settings = lab_settings(db.session)
    stored = db.session.scalars(sa.select(LimitSet).order_by(LimitSet.name)).all()
    in_force = settings.limit_set_id
    by_key = {s.preset_key: s for s in stored if s.preset_key}
    for preset in presets.PRESETS:
        mark = "*" if by_key.get(preset.key) and by_key[preset.key].id == in_force else " "
        click.echo(f"{mark} {preset.key:<12} {preset.name} (preset)")
    for saved in stored:
        if saved.preset_key is None:
            mark = "*" if saved.id == in_force else " "
            click.echo(f"{mark} {saved.name} (saved set)")
    if in_force is None:
        click.echo("No limit set is in force: doses are not assessed against any limit.")
    elif settings.limit_set_by_default:
        click.echo("The set in force was installed by default and is not yet confirmed "
                   "(`flask limits use KEY --reason TEXT` confirms or changes it).")


_FROM = click.option("--from", "from_on", type=click.DateTime(formats=["%Y-%m-%d"]), default=None,
                     help="First lab date the change applies to, YYYY-MM-DD (default: today in the lab's "
                          "time zone).")
_REASON = click.option("--reason", required=True, help="Why, for the audit trail and the rules' history.")


def _apply(change):
    """Record a change of the rules, re-evaluate today and commit: (its result, investigations raised)."""
    try:
        result = change()
    except Invalid as error:
        db.session.rollback()
        raise _fail(error) from error
    raised = review_after_dose_change(db.session, lab_today())  # new rules can put someone at a level
    tell_about(raised)
    db.session.commit()
    deliver_queued()
    return result, raised


@limits.command("use")
@click.argument("key")
@_FROM
@_REASON
@with_appcontext
def use(key: str, from_on, reason: str):
    """Put a preset (by key) or a saved set (by name) in force for the whole lab from a date."""
    today = lab_today()
    from_on = from_on.date() if from_on else today

    def choose():
        chosen = db.session.scalar(sa.select(LimitSet).where(LimitSet.name == key))
        if chosen is None and key in {p.key for p in presets.PRESETS}:
            chosen = install_preset(db.session, key)
        if chosen is None:
            raise Invalid.one("key", f"No preset or saved set is called '{key}'.")
        choose_limit_set(db.session, lab_settings(db.session), chosen, from_on=from_on, reason=reason,
                         today=today, by=None)
        return chosen

    chosen, raised = _apply(choose)
    click.echo(f"'{chosen.name}' is the limit set in force from {from_on.isoformat()}; "
               f"{len(raised)} new investigation(s) raised.")


def install_default_limit_set() -> LimitSet | None:
    """Give a database without a limit set the preset named by LIMIT_SET (see config)."""
    try:
        installed = install_default(db.session, lab_settings(db.session), current_app.config.get("LIMIT_SET"),
                                    lab_today())
    except Invalid as error:
        db.session.rollback()
        raise click.ClickException(f"LIMIT_SET: {error.errors.get('preset')}") from error
    db.session.commit()
    return installed


def install_cli(app: Flask) -> None:
    """Add `flask limits`, and make `flask db upgrade` finish by installing the default limit set."""
    app.cli.add_command(limits)
    group = app.cli.commands.get("db")
    if group is None or "upgrade" not in group.commands:
        return
    original = group.commands["upgrade"]

    @with_appcontext
    def upgrade_then_default(directory, sql, tag, x_arg, revision):
        flask_migrate.upgrade(directory, revision, sql, tag, x_arg)
        if sql:
            return  # SQL printed, nothing applied
        installed = install_default_limit_set()
        if installed is not None:
            click.echo(f"No limit set was in force: installed '{installed.name}' by default "
                       "(LIMIT_SET); the safety officer should confirm or change it.")

    command = click.Command("upgrade", params=original.params, callback=upgrade_then_default,
                            help=original.help)
    app.cli.add_command(click.Group("db", commands={**group.commands, "upgrade": command},
                                    help=group.help), name="db")


@limits.command("policies")
@click.option("--proration", type=click.Choice([p.value for p in Proration]), default=None)
@click.option("--mrd", type=click.Choice([m.value for m in MrdPolicy]), default=None)
@click.option("--lens-source", type=click.Choice([s.value for s in LensSource]), default=None)
@_FROM
@_REASON
@with_appcontext
def policies(proration, mrd, lens_source, from_on, reason):
    """Change the counting policies from a date; those not given stay as they stand on that date."""
    today = lab_today()
    from_on = from_on.date() if from_on else today
    _, before = rules_on(db.session, from_on)
    values = {"proration": proration or before.proration, "mrd_policy": mrd or before.mrd,
              "lens_source": lens_source or before.lens_source,
              "five_year_first_year": before.first_block_year}
    change, raised = _apply(lambda: set_policies(
        db.session, lab_settings(db.session), values, from_on=from_on, reason=reason, today=today, by=None))
    click.echo(f"{len(raised)} new investigation(s) raised. Policies from {from_on.isoformat()}: proration "
               f"{change.proration}, MRD {change.mrd_policy}, lens source {change.lens_source}.")
