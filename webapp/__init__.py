"""The Flask application factory."""
from __future__ import annotations

import os

from flask import Flask, g, render_template, session
from flask_login import current_user
from flask_wtf.csrf import CSRFError

import migrations
from models.audit.audit_ops import set_actor, use_key
from models.people.tables import Person
from webapp import config, formatting, slots
from webapp.auth import login_sessions
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
)


def create_app(overrides: dict | None = None) -> Flask:
    """Build the app: configuration, extensions, blueprints, error pages."""
    app = Flask(__name__, instance_relative_config=True)
    os.makedirs(app.instance_path, exist_ok=True)
    app.config.update(config.from_environment(app.instance_path))
    app.config.update(overrides or {})
    use_key(app.config["AUDIT_KEY"])

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

    formatting.install(app)
    slots.install(app)
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


@slots.request_hooks.add(order=20)
def _actor() -> None:
    """Attribute every change in a request to the person making it."""
    set_actor(db.session, current_user.id if current_user.is_authenticated else None)
    g.actor = current_user


def _install_error_pages(app: Flask) -> None:
    """Plain error pages that keep the caution and the navigation."""

    @app.errorhandler(CSRFError)
    def _csrf(error):
        return render_template("error.html", code=400, title="Form expired or forged",
                               message="The form was refused because its security token was "
                                       "missing or out of date. Reload the page and try again."), 400

    @app.errorhandler(403)
    def _forbidden(_error):
        return render_template("error.html", code=403, title="Not allowed",
                               message="Your role does not give access to this page."), 403

    @app.errorhandler(404)
    def _not_found(_error):
        return render_template("error.html", code=404, title="Not found",
                               message="There is no such page or record."), 404

    @app.errorhandler(429)
    def _too_many(_error):
        return render_template("error.html", code=429, title="Too many attempts",
                               message="Too many attempts in a short time. Wait a minute."), 429

    @app.errorhandler(500)
    def _server_error(_error):
        db.session.rollback()
        return render_template("error.html", code=500, title="Something went wrong",
                               message="Nothing was saved. The error has been logged."), 500
