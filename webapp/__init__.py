"""The Flask application factory."""
from __future__ import annotations

import os

from flask import Flask, g, render_template
from flask_login import current_user
from flask_wtf.csrf import CSRFError

from models.audit.audit_ops import set_actor
from models.people.tables import Person
from webapp import config, formatting
from webapp.exposure.limits_cli import install_cli
from webapp.extensions import csrf, db, limiter, login_manager, migrate

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
    "webapp.due",
    "webapp.doses",
    "webapp.exposure",
    "webapp.demo",
)


def create_app(overrides: dict | None = None) -> Flask:
    """Build the app: configuration, extensions, blueprints, error pages."""
    app = Flask(__name__, instance_relative_config=True)
    os.makedirs(app.instance_path, exist_ok=True)
    app.config.update(config.from_environment(app.instance_path))
    app.config.update(overrides or {})

    db.init_app(app)
    migrate.init_app(app, db, directory=os.path.join(os.path.dirname(app.root_path), "migrations"))
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
    _install_request_hooks(app)
    _install_error_pages(app)
    return app


@login_manager.user_loader
def _load_person(person_id: str) -> Person | None:
    """Reload the logged-in person; a deactivated account is logged out."""
    person = db.session.get(Person, int(person_id))
    return person if person is not None and person.active else None


def _install_request_hooks(app: Flask) -> None:
    """Attribute every change in a request to the person making it."""

    @app.before_request
    def _actor() -> None:
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
