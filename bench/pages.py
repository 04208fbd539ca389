"""Pages as a person feels them: timed over HTTP against gunicorn serving the synthetic lab.

Warm p50/p95 of the safety officer's home page, a person's exposure page and the sessions list,
the first request after a dose change, and the server's bare JSON endpoint as the framework floor.
"""
from __future__ import annotations

import http.cookiejar
import re
import statistics
import time
import urllib.parse
import urllib.request
from dataclasses import dataclass
from datetime import UTC, date, datetime, timedelta

import sqlalchemy as sa

REQUEST_TIMEOUT_S = 120


@dataclass(frozen=True)
class Spread:
    """Median and 95th percentile of repeated requests, in seconds."""

    p50: float
    p95: float


class Browser:
    """One logged-in person's cookies against the server."""

    def __init__(self, base_url: str) -> None:
        self.base_url = base_url
        self.opener = urllib.request.build_opener(
            urllib.request.HTTPCookieProcessor(http.cookiejar.CookieJar()))

    def get(self, path: str) -> tuple[int, str]:
        """Status and body of a GET."""
        with self.opener.open(self.base_url + path, timeout=REQUEST_TIMEOUT_S) as response:
            return response.status, response.read().decode()

    def log_in(self, login: str, password: str) -> None:
        """Log in through the form, with its CSRF token."""
        _, page = self.get("/login")
        token = re.search(r'name="csrf_token"[^>]*value="([^"]+)"', page)
        form = {"login": login, "password": password, **({"csrf_token": token.group(1)} if token else {})}
        data = urllib.parse.urlencode(form).encode()
        with self.opener.open(self.base_url + "/login", data=data, timeout=REQUEST_TIMEOUT_S) as response:
            if "/login" in response.url:
                raise RuntimeError("the bench could not log in")

    def timed(self, path: str) -> float:
        """Seconds of one GET, refusing anything but 200."""
        started = time.perf_counter()
        status, _ = self.get(path)
        if status != 200:
            raise RuntimeError(f"{path} answered {status}")
        return time.perf_counter() - started

    def spread(self, path: str, runs: int, warm_up: int) -> Spread:
        """p50 and p95 of `runs` GETs after `warm_up` untimed ones (one per worker loads its caches)."""
        for _ in range(warm_up):
            self.timed(path)
        times = sorted(self.timed(path) for _ in range(runs))
        return Spread(statistics.median(times), times[min(len(times) - 1, round(0.95 * (len(times) - 1)))])


def add_authorisations(connection: sa.Connection, n: int, today: date) -> None:
    """`n` authorisations spread over the people and the bench's instruments, refreshers a year apart."""
    from models.instruments.tables import Authorisation, Instrument
    from models.people.tables import Person

    people = connection.scalars(sa.select(Person.id).where(Person.login.like("worker%")).order_by(Person.id)).all()
    instruments = connection.scalars(sa.select(Instrument.id).order_by(Instrument.id)).all()
    pairs = [(people[i % len(people)], instruments[(i // len(people) + i) % len(instruments)]) for i in range(n)]
    rows = [{"person_id": p, "instrument_id": i, "level": "independent",
             "trained_on": today - timedelta(days=200 + k % 300),
             "refresher_due": today - timedelta(days=200 + k % 300) + timedelta(days=365),
             "granted_at": datetime.now(UTC)}
            for k, (p, i) in enumerate(dict.fromkeys(pairs))]
    connection.execute(sa.insert(Authorisation.__table__), rows)


def change_a_dose(app, person_login: str, today: date) -> None:
    """A new dose record written the app's way (audited), as the safety officer would enter it."""
    from models.core.codes import Location, Quantity, Result
    from models.doses.record_ops import DoseEntry, add_dose_record
    from models.people.tables import Person
    from webapp.extensions import db

    with app.app_context():
        person_id = db.session.scalar(sa.select(Person.id).where(Person.login == person_login))
        start = today.replace(day=1)
        add_dose_record(db.session, DoseEntry(person_id=person_id, wear_start=start, wear_end=start,
                                              quantity=Quantity.HP10, location=Location.ABDOMEN,
                                              result=Result.MEASURED, value=0.01))
        db.session.commit()
