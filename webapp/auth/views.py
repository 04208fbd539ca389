"""Log in, log out."""
from __future__ import annotations

import sqlalchemy as sa
from flask import flash, redirect, render_template, request, session, url_for
from flask_login import current_user, login_required, login_user, logout_user

from models.people.tables import Person
from webapp.auth import bp
from webapp.auth.forms import LoginForm
from webapp.extensions import db, limiter
from webapp.passwords import password_matches

WRONG_LOGIN = "Login or password not recognised."


@bp.route("/login", methods=["GET", "POST"])
@limiter.limit("10 per minute", methods=["POST"])
def login():
    """Check the password, renew the session and send the person to their home page."""
    if current_user.is_authenticated:
        return redirect(url_for("home.index"))
    form = LoginForm()
    if form.validate_on_submit():
        person = db.session.scalar(sa.select(Person).where(Person.login == form.login.data.strip()))
        if person and person.active and password_matches(person.password_hash, form.password.data):
            session.clear()  # a fresh session at login: nothing carried over from before
            login_user(person)
            return redirect(_safe_next(request.args.get("next")))
        form.password.errors.append(WRONG_LOGIN)
    return render_template("auth/login.html", form=form)


@bp.route("/logout", methods=["POST"])
@login_required
def logout():
    """End the session."""
    logout_user()
    session.clear()
    flash("You are logged out.", "info")
    return redirect(url_for("auth.login"))


def _safe_next(target: str | None) -> str:
    """Follow ?next= only to a path on this site."""
    if target and target.startswith("/") and not target.startswith("//"):
        return target
    return url_for("home.index")
