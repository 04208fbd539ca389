"""Shared fixtures: the app on SQLite and PostgreSQL, factories, SMTP and a live server."""
from __future__ import annotations

import contextlib
import os
import re
import shutil
import socket
import threading
import time
import uuid
from datetime import UTC, date, datetime, timedelta

import psycopg
import pytest
import sqlalchemy as sa
from flask import g
from flask.testing import FlaskClient
from werkzeug.security import generate_password_hash
from werkzeug.serving import make_server

from models import Base
from models.audit.audit_ops import use_key
from models.audit.verify_ops import record_baseline
from models.core import base
from models.core.codes import WorkerCategory
from models.core.settings import LabSettings
from models.instruments.instrument_ops import mark_commissioned, save_instrument
from models.instruments.tables import Authorisation, AuthorisationLevel, Enclosure, InstrumentKind
from models.people.person_ops import add_person
from models.people.tables import Role
from webapp import create_app
from webapp.extensions import db

PASSWORD = "correct horse battery"
# A cheap hash keeps tests fast; the app itself hashes with scrypt.
PASSWORD_HASH = generate_password_hash(PASSWORD, method="pbkdf2:sha256:1000")
AUDIT_KEY = "test-audit-key"
PG_ADMIN_URL = os.environ.get("TEST_POSTGRES_URL", "postgresql://postgres@127.0.0.1:5432/test")
# The lab's clock in every test: noon UTC (the tests' lab zone), so hours either side stay on the
# same day whatever the machine's clock and TZ say. The date is the day these tests were written.
LAB_NOW = datetime(2026, 12, 2, 12, 0, tzinfo=UTC)
LAB_TODAY = LAB_NOW.date()
BACKENDS = [b for b in os.environ.get("TEST_BACKENDS", "sqlite,postgresql").split(",") if b]


def _flag(name: str) -> bool:
    """True when an environment switch is on."""
    return os.environ.get(name, "") in {"1", "true", "yes"}


def base_config(database_url: str, **extra) -> dict:
    """Configuration for a test app."""
    return {"TESTING": True, "SECRET_KEY": "test", "AUDIT_KEY": AUDIT_KEY, "SQLALCHEMY_DATABASE_URI": database_url,
            "WTF_CSRF_ENABLED": False, "RATELIMIT_ENABLED": False, "MAIL_SERVER": "",
            "LAB_TIMEZONE": "UTC", **extra}


@pytest.fixture(autouse=True)
def lab_clock(monkeypatch):
    """The app's clock starts at LAB_NOW in every test and runs on from there."""
    started = time.monotonic()
    monkeypatch.setattr(base, "clock", lambda: LAB_NOW + timedelta(seconds=time.monotonic() - started))


@pytest.fixture
def today() -> date:
    """The lab's date in every test."""
    return LAB_TODAY


def migrate_to_head(database_url: str, **extra) -> None:
    """Build a database's schema the way production does: by running the migrations."""
    from flask_migrate import upgrade

    app = create_app(base_config(database_url, **extra))
    with app.app_context():
        upgrade()
        db.engine.dispose()


@pytest.fixture(scope="session")
def sqlite_template(tmp_path_factory) -> str:
    """A migrated SQLite file, copied for each test."""
    path = tmp_path_factory.mktemp("template") / "template.sqlite"
    migrate_to_head(f"sqlite:///{path}")
    return str(path)


@contextlib.contextmanager
def empty_postgres_database():
    """A new, empty PostgreSQL database, dropped afterwards; skips (or fails) when unreachable."""
    try:
        admin = psycopg.connect(PG_ADMIN_URL, autocommit=True, connect_timeout=3)
    except psycopg.OperationalError as error:
        if _flag("REQUIRE_POSTGRES"):
            pytest.fail(f"PostgreSQL is required (REQUIRE_POSTGRES=1) but unreachable: {error}")
        pytest.skip(f"PostgreSQL unreachable at {PG_ADMIN_URL}: {error}")
    name = f"logbook_test_{uuid.uuid4().hex[:12]}"
    admin.execute(f'CREATE DATABASE "{name}"')
    try:
        yield PG_ADMIN_URL.rsplit("/", 1)[0].replace("postgresql://", "postgresql+psycopg://") + f"/{name}"
    finally:
        admin.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')
        admin.close()


@pytest.fixture(scope="session")
def postgres_database():
    """A fresh, migrated PostgreSQL database for this run, dropped at the end."""
    with empty_postgres_database() as url:
        migrate_to_head(url)
        yield url


@pytest.fixture(params=BACKENDS)
def database_url(request, tmp_path) -> str:
    """An empty, migrated database on each backend in turn."""
    if request.param == "sqlite":
        path = tmp_path / "test.sqlite"
        shutil.copy(request.getfixturevalue("sqlite_template"), path)
        return f"sqlite:///{path}"
    url = request.getfixturevalue("postgres_database")
    tables = ", ".join(f'"{t.name}"' for t in Base.metadata.sorted_tables)
    engine = sa.create_engine(url)
    with engine.begin() as conn:
        conn.execute(sa.text(f"TRUNCATE {tables} RESTART IDENTITY CASCADE"))
        # The first migration creates the settings row; put it back as a fresh database has it.
        conn.execute(LabSettings.__table__.insert().values(id=1))
        use_key(AUDIT_KEY)
        record_baseline(conn, "Recorded as found when the audit trail began checking stored rows.")
    engine.dispose()
    return url


@pytest.fixture
def app_config() -> dict:
    """Extra configuration a test module can override."""
    return {}


@pytest.fixture
def app(database_url, app_config):
    """The app bound to a fresh database, inside an app context."""
    app = create_app(base_config(database_url, **app_config))
    with app.app_context():
        yield app
        db.session.remove()
        db.engine.dispose()


@pytest.fixture
def session(app):
    """The app's database session."""
    return db.session


@pytest.fixture
def client(app):
    """A test client."""
    return app.test_client()


@pytest.fixture
def make_person(app):
    """Factory: a committed person who can log in with PASSWORD."""
    counter = iter(range(1, 10_000))

    def make(login: str | None = None, *, roles=(Role.OPERATOR,), name: str | None = None,
             category=WorkerCategory.ADULT_WORKER, email: str | None = None):
        n = next(counter)
        login = login or f"person{n}"
        person = add_person(db.session, login=login, name=name or f"Person {login}",
                            email=email or f"{login}@example.org", roles=set(roles),
                            category=category, password_hash=PASSWORD_HASH)
        db.session.commit()
        return person

    return make


@pytest.fixture
def make_instrument(app):
    """Factory: a committed instrument in service (a Cu powder diffractometer unless told otherwise).

    `commissioned=False` leaves it as the admin's form does: not yet commissioned.
    """
    counter = iter(range(1, 10_000))

    def make(**values):
        n = next(counter)
        defaults = {"name": f"Instrument {n}", "kind": InstrumentKind.POWDER_XRD, "room": "B1",
                    "registration_number": f"REG-{n}", "anode": "Cu", "max_kv": 60.0,
                    "max_ma": 60.0, "max_power_w": 2200.0, "enclosure": Enclosure.ENCLOSED,
                    "check_interval_days": 30, "survey_interval_days": 365,
                    "surface_action_level_usv_h": 2.5, "housing_action_level_usv_h": 25.0}
        commissioned = values.pop("commissioned", True)
        instrument = save_instrument(db.session, {**defaults, **values})
        if commissioned:
            # Most tests need an instrument in use; commissioning has tests of its own.
            mark_commissioned(db.session, instrument, instrument.created_at)
        db.session.commit()
        return instrument

    return make


@pytest.fixture
def authorise(app):
    """Factory: authorise a person on an instrument, trained 30 days ago, refresher in a year."""

    def make(person, instrument, *, level=AuthorisationLevel.INDEPENDENT,
             trained_on: date | None = None, refresher_due: date | None = None):
        # Trained a while ago, so sessions from earlier today are covered whatever the hour.
        trained_on = trained_on or LAB_TODAY - timedelta(days=30)
        auth = Authorisation(person_id=person.id, instrument_id=instrument.id, level=level,
                             trained_on=trained_on,
                             refresher_due=refresher_due or trained_on + timedelta(days=365))
        db.session.add(auth)
        db.session.commit()
        return auth

    return make


def csrf_token_of(response) -> str:
    """The CSRF token in a form page."""
    return re.search(r'name="csrf_token"[^>]*value="([^"]+)"', response.get_data(as_text=True)).group(1)


class PersonClient(FlaskClient):
    """A test client that forgets what the shared app context's `g` cached for the previous client."""

    def open(self, *args, **kwargs):
        """Drop the cached user and CSRF token, then request."""
        g.pop("_login_user", None)
        g.pop("csrf_token", None)
        return super().open(*args, **kwargs)


@pytest.fixture
def login(app):
    """Log a fresh client in as a person; several people can act in one test.

    Test requests share the test's app context, so the login manager's user cached in `g` would
    otherwise carry over from one client to the next.
    """

    def log_in(person):
        client = PersonClient(app, app.response_class, use_cookies=True)
        fields = {"login": person.login, "password": PASSWORD}
        if app.config["WTF_CSRF_ENABLED"]:
            fields["csrf_token"] = csrf_token_of(client.get("/login"))
        response = client.post("/login", data=fields)
        assert response.status_code == 302, "login failed"
        return client

    return log_in


class Mailbox:
    """Messages received by the test SMTP server."""

    def __init__(self):
        self.messages = []

    async def handle_DATA(self, server, session, envelope):  # noqa: N802 (aiosmtpd's name)
        from email import message_from_bytes
        from email.policy import default

        self.messages.append(message_from_bytes(envelope.content, policy=default))
        return "250 OK"


def free_port() -> int:
    """A free TCP port on loopback."""
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


class SmtpSwitch:
    """A real SMTP server on loopback that a test can stop and start again on the same port."""

    def __init__(self):
        self.mailbox = Mailbox()
        self.port = free_port()
        self.controller = None

    def start(self) -> None:
        """Start answering."""
        from aiosmtpd.controller import Controller

        self.controller = Controller(self.mailbox, hostname="127.0.0.1", port=self.port)
        self.controller.start()

    def stop(self) -> None:
        """Stop answering: connections are refused from now on."""
        if self.controller is not None:
            self.controller.stop()
            self.controller = None


@pytest.fixture
def smtp_switch():
    """A real SMTP server on loopback, running, that the test may stop mid-way."""
    switch = SmtpSwitch()
    switch.start()
    try:
        yield switch
    finally:
        switch.stop()


@pytest.fixture
def smtp_server(smtp_switch):
    """A real SMTP server on loopback; yields (port, mailbox)."""
    return smtp_switch.port, smtp_switch.mailbox


@pytest.fixture
def mail_app_config(smtp_server) -> dict:
    """Configuration that sends mail to the test SMTP server."""
    port, _ = smtp_server
    return {"MAIL_SERVER": "127.0.0.1", "MAIL_PORT": port}


@pytest.fixture
def live_server(tmp_path, sqlite_template):
    """The app served on a free loopback port over a fresh SQLite file; yields (url, app)."""
    path = tmp_path / "live.sqlite"
    shutil.copy(sqlite_template, path)
    app = create_app(base_config(f"sqlite:///{path}", TESTING=False, WTF_CSRF_ENABLED=True))
    server = make_server("127.0.0.1", free_port(), app, threaded=True)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{server.server_port}", app
    finally:
        server.shutdown()
        with app.app_context():
            db.engine.dispose()


CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run", "--disable-quic"]


@pytest.fixture(scope="session")
def browser():
    """Debian's Chromium driven by Playwright; skipped when absent unless REQUIRE_BROWSER=1."""
    if not os.path.exists(CHROMIUM):
        if _flag("REQUIRE_BROWSER"):
            pytest.fail(f"Chromium is required (REQUIRE_BROWSER=1) but {CHROMIUM} is missing")
        pytest.skip(f"Chromium not installed at {CHROMIUM} (apt-get install -y chromium)")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=CHROMIUM, headless=True,
                                             args=CHROMIUM_ARGS)
        yield browser
        browser.close()


def browser_log_in(page, url: str, login: str) -> None:
    """Log a browser page in through the login form and wait for the home page."""
    page.goto(f"{url}/login")
    page.fill("input[name=login]", login)
    page.fill("input[name=password]", PASSWORD)
    page.click("button[type=submit]")
    page.wait_for_url(f"{url}/")


@pytest.fixture
def page(browser):
    """A fresh browser page."""
    context = browser.new_context()
    page = context.new_page()
    yield page
    context.close()


# --- doses factories ---
@pytest.fixture
def make_dosimeter(app):
    """Factory: a committed dosimeter issued to a person (whole body, monthly, unless told)."""
    from models.doses.dosimeter_ops import issue_dosimeter
    from models.doses.tables import DosimeterKind, ExchangeCycle

    counter = iter(range(1, 100_000))

    def make(wearer, *, serial: str | None = None, kind=DosimeterKind.WHOLE_BODY, hand=None,
             issued_on: date = date(2025, 1, 1), exchange_cycle=ExchangeCycle.MONTHLY):
        dosimeter = issue_dosimeter(db.session, serial=serial or f"D-{next(counter):05d}", kind=kind,
                                    hand=hand, wearer_id=wearer.id, issued_on=issued_on,
                                    exchange_cycle=exchange_cycle)
        db.session.commit()
        return dosimeter

    return make


@pytest.fixture
def make_dose(app):
    """Factory: a committed dose record (Hp(10) whole body, measured, in mSv, unless told)."""
    from models.core.codes import Location, Quantity, Result
    from models.doses.record_ops import DoseEntry, add_dose_record

    def make(person, *, wear_start: date = date(2025, 1, 1), wear_end: date = date(2025, 1, 31),
             value: float | None = 0.1, **values):
        entry = DoseEntry(**{"person_id": person.id, "wear_start": wear_start, "wear_end": wear_end,
                             "quantity": Quantity.HP10, "location": Location.WHOLE_BODY,
                             "result": Result.MEASURED, "value": value, **values})
        record = add_dose_record(db.session, entry)
        db.session.commit()
        return record

    return make


# --- logbook factories ---
@pytest.fixture
def make_session_entry(app):
    """Factory: a committed session written straight to the table (no rules applied)."""
    from models.sessions.tables import InstrumentSession

    def make(instrument, operator, *, started_at: datetime | None = None,
             ended_at: datetime | None = None, kv: float = 40.0, ma: float = 40.0,
             beam_on_minutes: float | None = None):
        started_at = started_at or LAB_NOW - timedelta(hours=1)
        entry = InstrumentSession(instrument_id=instrument.id, operator_id=operator.id,
                                  started_at=started_at, ended_at=ended_at, kv=kv, ma=ma,
                                  beam_on_minutes=beam_on_minutes, pre_use_checks_confirmed=True)
        db.session.add(entry)
        db.session.commit()
        return entry

    return make


@pytest.fixture
def api_token(app):
    """Factory: a live API token (the secret) for an instrument."""
    from models.instruments.token_ops import create_token

    def make(instrument):
        _row, token = create_token(db.session, instrument)
        db.session.commit()
        return token

    return make


# --- checks factories ---
@pytest.fixture
def record_a_check(app):
    """Factory: a committed safety-device check; the named item positions fail, the rest pass."""
    from models.checks.check_ops import Answer, record_check
    from models.checks.checklist_ops import active_items, checklist_for
    from models.checks.tables import ItemResult

    def make(instrument, person, *, fail: tuple[int, ...] = (), performed_at=None):
        items = active_items(checklist_for(db.session, instrument))
        answers = {item.id: Answer(ItemResult.FAIL, "Does not work.") if n in fail
                   else Answer(ItemResult.PASS) for n, item in enumerate(items)}
        check = record_check(db.session, instrument, person, performed_at or LAB_NOW, answers,
                             None, None, LAB_NOW)
        db.session.commit()
        return check

    return make


# --- surveys factories ---


@pytest.fixture
def make_meter(app):
    """Factory: a committed survey meter, calibrated 30 days ago unless told otherwise."""
    from models.surveys.meter_ops import save_meter

    counter = iter(range(1, 10_000))

    def make(**values):
        n = next(counter)
        defaults = {"serial": f"SM-{n}", "model": "Thin-window GM", "detector_type": "Geiger-Müller",
                    "calibrated_on": LAB_TODAY - timedelta(days=30),
                    "calibration_interval_months": 12, "correction_factor": 1.0,
                    "energy_response_notes": None}
        meter = save_meter(db.session, {**defaults, **values}, LAB_TODAY)
        db.session.commit()
        return meter

    return make


# --- exposure factories ---
def put_in_force(session, key: str, from_on: date | None = None):
    """Install a shipped preset and put it in force for every date (or from `from_on`); flushes."""
    from models.core.bounds import EARLIEST
    from models.core.settings import lab_settings
    from models.exposure.limit_set_ops import install_preset
    from models.exposure.rules_ops import choose_limit_set

    return choose_limit_set(session, lab_settings(session), install_preset(session, key),
                            from_on=from_on or EARLIEST, reason="Test set-up.", today=LAB_TODAY, by=None)


@pytest.fixture
def use_limit_set(app):
    """Factory: install a shipped preset and put it in force for every date (or from `from_on`)."""

    def use(key: str = "icrp103", from_on: date | None = None):
        put_in_force(db.session, key, from_on)
        db.session.commit()

    return use
