"""The admin makes and revokes instrument PC tokens from the instrument page."""
from __future__ import annotations

from flask import abort, flash, redirect, render_template, url_for
from flask_login import current_user
from flask_wtf import FlaskForm

from models.audit import audit_ops
from models.instruments.tables import ApiToken, Instrument
from models.instruments.token_ops import create_token, revoke_token, tokens_of
from models.people.tables import Role
from webapp.access import roles_required
from webapp.api import bp
from webapp.extensions import db
from webapp.forms import error_text, validate_with
from webapp.slots import instrument_sections


@instrument_sections.add("api/_tokens.html", roles={Role.ADMIN}, order=90)
def _tokens(instrument: Instrument) -> dict:
    """The instrument's API tokens, for the admin."""
    return {"instrument": instrument, "tokens": tokens_of(db.session, instrument)}


@bp.route("/instruments/<int:instrument_id>/tokens", methods=["POST"])
@roles_required(Role.ADMIN)
def create(instrument_id: int):
    """Make a token and show it once; only its hash is kept."""
    instrument = db.session.get(Instrument, instrument_id) or abort(404)
    form = FlaskForm()
    if not (created := validate_with(form, lambda f: create_token(db.session, instrument, current_user))):
        flash(error_text(form), "error")
        return redirect(url_for("instruments.show", instrument_id=instrument.id))
    _row, token = created.value
    db.session.commit()
    response = render_template("api/token_created.html", instrument=instrument, token=token)
    # The token is on this page only: keep it out of caches and history.
    return response, 200, {"Cache-Control": "no-store"}


@bp.route("/tokens/<int:token_id>/revoke", methods=["POST"])
@roles_required(Role.ADMIN)
def revoke(token_id: int):
    """Stop a token from working."""
    row = db.session.get(ApiToken, token_id) or abort(404)
    form = FlaskForm()

    def stop(_form):
        with audit_ops.reason(db.session, "API token revoked by an admin"):
            revoke_token(db.session, row)

    if validate_with(form, stop):
        db.session.commit()
        flash("The token is revoked.", "info")
    else:
        flash(error_text(form), "error")
    return redirect(url_for("instruments.show", instrument_id=row.instrument_id))
