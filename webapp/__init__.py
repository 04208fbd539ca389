"""The Flask application factory."""
from __future__ import annotations

import os

from flask import Flask, g, has_request_context, render_template, request, session
from flask_login import current_user
from flask_wtf.csrf import CSRFError
from sqlalchemy import event
from sqlalchemy.orm import Session
from werkzeug.exceptions import HTTPException
from werkzeug.middleware.proxy_fix import ProxyFix
from werkzeug.routing import IntegerConverter

import migrations
from models.audit.audit_ops import set_actor, use_key
from models.core.bounds import MAX_ID
from models.people.tables import Person
from webapp import config, formatting, headers, slots
from webapp.api.problems import API_PREFIX, problem
from webapp.auth import login_sessions
from webapp.exposure.limits_cli import install_cli
from webapp.extensions import csrf, db, limiter, login_manager, migrate
from webapp.settings.new_database import set_lab_zone_after_first_revision

BLUEPRINTS = (
    "webapp.auth",
    "webapp.home",
    "webapp.people",
    "webapp.instruments",
    "webapp.audit",
    "webapp.settings",
    "webapp.sessions",
    "webapp.incidents",
    "webapp.api",
    "webapp.checks",
    "webapp.surveys",
    "webapp.shielding",
    "webapp.due",
    "webapp.doses",
    "webapp.exposure",
    "webapp.demo",
    "webapp.backup",
    "webapp.reports",
    "webapp.mail",
)


class IdConverter(IntegerConverter):
    """`<int:...>` in URLs: an id the database can hold; a longer number is simply not found (404)."""

    def __init__(self, url_map, fixed_digits=0, min=None, max=MAX_ID, signed=False):  # noqa: A002
        super().__init__(url_map, fixed_digits=fixed_digits, min=min, max=max, signed=signed)


def create_app(overrides: dict | None = None) -> Flask:
    """Build the app: configuration, extensions, blueprints, error pages."""
    app = Flask(__name__, instance_relative_config=True)
    app.url_map.converters["int"] = IdConverter
    os.makedirs(app.instance_path, exist_ok=True)
    app.config.update(config.from_environment(app.instance_path))
    app.config.update(overrides or {})
    use_key(app.config["AUDIT_KEY"])
    if app.config["PROXY_HOPS"]:
        hops = app.config["PROXY_HOPS"]
        app.wsgi_app = ProxyFix(app.wsgi_app, x_for=hops, x_proto=hops)

    db.init_app(app)
    migrate.init_app(app, db, directory=os.path.dirname(migrations.__file__),
                     on_version_apply=set_lab_zone_after_first_revision)
    csrf.init_app(app)
    limiter.init_app(app)
    login_manager.init_app(app)
    login_manager.login_view = "auth.login"
    login_manager.login_message = "Please log in to continue."
    login_manager.session_protection = "strong"

    for name in BLUEPRINTS:
        module = __import__(name, fromlist=["bp"])
        app.register_blueprint(module.bp)

    install_cli(app)  # after migrate.init_app, which adds the `db` group it extends
    formatting.install(app)
    slots.install(app)
    headers.install(app)
    _install_error_pages(app)
    return app


@login_manager.user_loader
def _load_person(person_id: str) -> Person | None:
    """Reload the logged-in person; an ended, idle or expired session or a deactivated account is out."""
    person = db.session.get(Person, int(person_id)) if person_id.isdigit() and len(person_id) < 10 else None
    if person is None or not person.active or not login_sessions.still_valid(person):
        session.clear()
        return None
    return person


@event.listens_for(Session, "after_commit")
def _note_commit(committed: Session) -> None:
    """Remember that this request saved something, so an error page never says it did not."""
    if has_request_context() and committed is db.session():
        g.committed = True


@slots.request_hooks.add(order=20)
def _actor() -> None:
    """Attribute every change in a request to the person making it."""
    g.committed = False
    set_actor(db.session, current_user.id if current_user.is_authenticated else None)
    g.actor = current_user

def _answer(code: int, title: str, message: str):
    """An error answer: a problem document for the API, a page that keeps the caution otherwise."""
    if request.path.startswith(API_PREFIX):
        return problem(code, title, message)
    return render_template("error.html", code=code, title=title, message=message), code


# Code, title and message of the plain errors; the API answers them as problem documents too.
PLAIN_ERRORS = {
    400: ("Bad request", "The request could not be read. Check what was sent and try again."),
    403: ("Not allowed", "Your role does not give access to this page."),
    404: ("Not found", "There is no such page or record."),
    405: ("Method not allowed", "This address does not take that kind of request."),
    413: ("Too large", "What was sent is larger than this logbook accepts ({limit})."),
    429: ("Too many attempts", "Too many attempts in a short time. Wait a minute."),
}


def _install_error_pages(app: Flask) -> None:
    """Plain error pages that keep the caution and the navigation; problem documents for the API."""

    @app.errorhandler(CSRFError)
    def _csrf(error):
        return _answer(400, "Form expired or forged", "The form was refused because its security token "
                                                     "was missing or out of date. Reload the page and try again.")

    def plain(error: HTTPException):
        title, message = PLAIN_ERRORS[error.code]
        return _answer(error.code, title, message.format(limit=config.upload_limit_text(app.config)))

    for code in PLAIN_ERRORS:
        app.register_error_handler(code, plain)

    @app.errorhandler(500)
    def _server_error(_error):
        db.session.rollback()
        if g.get("committed"):
            message = ("The error came after a change was saved. Look at the record before trying "
                       "again, so it is not entered twice. The error has been logged.")
        else:
            message = "Nothing was saved. The error has been logged."
        return _answer(500, "Something went wrong", message)
