"""Log in, log out, change a password, reset a forgotten one."""
from __future__ import annotations

import sqlalchemy as sa
from flask import flash, redirect, render_template, request, session, url_for
from flask_login import current_user, login_required, login_user, logout_user

from models.core.base import utcnow
from models.people.account_ops import end_sessions, set_password
from models.people.person_ops import find_person
from models.people.tables import Person
from webapp.auth import bp, login_sessions, reset
from webapp.auth.forms import ChangePasswordForm, LoginForm, NewPasswordForm, ResetRequestForm
from webapp.extensions import db, limiter
from webapp.mail import link, send_mail
from webapp.passwords import hash_password, password_matches

WRONG_LOGIN = "Login or password not recognised."
# Per address and per account: guessing one person's password from many addresses is slowed too.
PER_ADDRESS = "10 per minute"
PER_ACCOUNT = "10 per 15 minutes"
RESET_SENT = f"If that login has an e-mail address, {reset.RESET_SENT_MARK}. It works once, within an hour."


def _attempted_account() -> str:
    """The throttle key of the account a login attempt names."""
    return "account:" + request.form.get("login", "").strip().lower()[:64]


@bp.route("/login", methods=["GET", "POST"])
@limiter.limit(PER_ADDRESS, methods=["POST"])
@limiter.limit(PER_ACCOUNT, methods=["POST"], key_func=_attempted_account)
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
            login_sessions.begin(person)
            return redirect(_safe_next(request.args.get("next")))
        form.password.errors.append(WRONG_LOGIN)
    return render_template("auth/login.html", form=form)


@bp.route("/logout", methods=["POST"])
@login_required
def logout():
    """End this session and every other session of the same person."""
    end_sessions(db.session, current_user)
    db.session.commit()
    logout_user()
    session.clear()
    flash("You are logged out, on every device.", "info")
    return redirect(url_for("auth.login"))


@bp.route("/account/password", methods=["GET", "POST"])
@login_required
def password():
    """Change one's own password; every other session of the person ends."""
    form = ChangePasswordForm(current_user)
    if form.validate_on_submit():
        if password_matches(current_user.password_hash, form.current.data):
            set_password(db.session, current_user, hash_password(form.password.data))
            db.session.commit()
            login_sessions.keep_epoch(current_user)
            flash("Your password is changed. Other devices have been logged out.", "info")
            return redirect(url_for("home.index"))
        form.current.errors.append("This is not your current password.")
    return render_template("auth/password.html", form=form)


@bp.route("/account/reset", methods=["GET", "POST"])
@limiter.limit("5 per 15 minutes", methods=["POST"])
def reset_request():
    """E-mail a one-time reset link; the answer never tells whether the login exists."""
    form = ResetRequestForm()
    if form.validate_on_submit():
        person = find_person(db.session, form.login.data.strip())
        if person is not None and person.active and person.email:
            _mail_reset_link(person)
            db.session.commit()  # the message waits in the outbox; it is sent after the request
        flash(RESET_SENT, "info")
        return redirect(url_for("auth.login"))
    return render_template("auth/reset_request.html", form=form)


@bp.route("/account/reset/<token>", methods=["GET", "POST"])
@limiter.limit("10 per 15 minutes", methods=["POST"])
def reset_password(token: str):
    """Set a new password from a reset link; every session of the person ends."""
    person = reset.person_for(token, utcnow())
    if person is None:
        return render_template("auth/reset_spent.html"), 410
    form = NewPasswordForm(person)
    if form.validate_on_submit():
        set_password(db.session, person, hash_password(form.password.data))
        db.session.commit()
        flash("Your new password is set. Log in with it.", "info")
        return redirect(url_for("auth.login"))
    return render_template("auth/reset.html", form=form)


def _mail_reset_link(person: Person) -> None:
    """Queue the link; whether it is delivered is never shown, so the answer still tells nothing."""
    token = reset.make_token(person, utcnow())
    send_mail([person.email], "Setting a new password for the X-ray safety logbook",
              f"Hello {person.name},\n\nsomeone (hopefully you) asked to set a new password "
              f"for the login '{person.login}'. Open this link within an hour; it works once:\n\n"
              f"{link('auth.reset_password', token=token)}\n\n"
              "If you did not ask, ignore this message; your password stays as it is.")


def _safe_next(target: str | None) -> str:
    """Follow ?next= only to a path on this site."""
    if target and target.startswith("/") and not target.startswith("//"):
        return target
    return url_for("home.index")
