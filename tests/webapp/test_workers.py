"""Two gunicorn workers over one database: what one worker writes, the other shows on its next request.

No worker keeps a copy of the lab's evaluation: today's is stored in the database with each change
(models/exposure/figures_ops.py), and another date's is computed from the records, so a dose entered
through one worker is never hidden from the other. Login attempts are counted in shared storage.
"""
from __future__ import annotations

import http.cookiejar
import re
import shutil
import urllib.error
import urllib.parse
import urllib.request
from concurrent.futures import ThreadPoolExecutor
from datetime import date

import pytest

from bench.server import gunicorn
from models.people.tables import Role
from tests.conftest import PASSWORD, free_port

pytestmark = pytest.mark.slow

ROUNDS = 25  # rounds of parallel requests before giving up on reaching both workers
ON = "2025-06-30"


class Browser:
    """A cookie-keeping HTTP client that reports which worker answered."""

    def __init__(self, base: str):
        self.base = base
        self.opener = urllib.request.build_opener(urllib.request.HTTPCookieProcessor(http.cookiejar.CookieJar()))

    def get(self, path: str) -> tuple[int, str, str]:
        """Status, worker pid and text of a GET."""
        return self._open(urllib.request.Request(self.base + path))

    def post(self, path: str, fields: dict) -> tuple[int, str, str]:
        """Status, worker pid and text of a form POST (redirects followed)."""
        data = urllib.parse.urlencode(fields).encode()
        return self._open(urllib.request.Request(self.base + path, data=data))

    def csrf(self, path: str) -> str:
        """The CSRF token of a form page."""
        _status, _pid, text = self.get(path)
        return re.search(r'name="csrf_token"[^>]*value="([^"]+)"', text).group(1)

    def _open(self, request) -> tuple[int, str, str]:
        try:
            with self.opener.open(request, timeout=30) as response:
                return response.status, response.headers["X-Worker-Pid"], response.read().decode()
        except urllib.error.HTTPError as error:
            return error.code, error.headers["X-Worker-Pid"], error.read().decode()


def _in_parallel(job, n: int = 3) -> list:
    """Run `job` n times at once, so that a busy worker leaves the next request to the other."""
    with ThreadPoolExecutor(n) as pool:
        return list(pool.map(lambda _: job(), range(n)))


def test_a_dose_entered_through_one_worker_shows_on_the_other(database_url, app, make_person, make_dose):
    officer = make_person("rso", roles=(Role.SAFETY_OFFICER,))
    worker = make_person("lb")
    make_dose(worker, wear_start=date(2025, 1, 1), wear_end=date(2025, 1, 31), value=0.42)
    page = f"/exposure/person/{worker.id}?on={ON}"
    with gunicorn(database_url, free_port(), workers=2) as base:
        browser = Browser(base)
        status, _pid, _text = browser.post("/login", {"login": officer.login, "password": PASSWORD,
                                                      "csrf_token": browser.csrf("/login")})
        assert status == 200
        warmed = set()
        for _ in range(ROUNDS):
            for status, pid, text in _in_parallel(lambda: browser.get(page)):
                assert status == 200 and "0.42" in text and "0.79" not in text
                warmed.add(pid)
            if len(warmed) == 2:
                break
        assert len(warmed) == 2, "the requests never reached the second worker"
        status, _pid, text = browser.post("/doses/new", {
            "person": worker.id, "dosimeter": "", "wear_start": "2025-02-01", "wear_end": "2025-02-28",
            "quantity": "Hp(10)", "location": "whole_body", "result": "measured", "value": "0.37",
            "unit": "mSv", "mrd": "", "source": "dosimetry_report", "basis": "",
            "csrf_token": browser.csrf("/doses/new")})
        assert status == 200 and "Dose record saved" in text
        seen = set()
        for _ in range(ROUNDS):
            for status, pid, text in _in_parallel(lambda: browser.get(page)):
                # Hp(10) this year: 0.42 (January) + 0.37 (February) = 0.79 mSv, on every worker.
                assert status == 200 and "0.79" in text, f"worker {pid} showed a stale evaluation"
                seen.add(pid)
            if seen == warmed:
                break
        assert seen == warmed


def test_login_attempts_are_counted_across_workers(sqlite_template, tmp_path):
    """With shared storage (Redis), two workers together let no more attempts through than one."""
    redis = pytest.importorskip("redis")
    storage = "redis://127.0.0.1:6379/13"  # a database of its own, emptied first
    try:
        redis.Redis.from_url(storage, socket_connect_timeout=2).flushdb()
    except redis.exceptions.ConnectionError as error:
        pytest.skip(f"Redis unreachable at 127.0.0.1:6379: {error}")
    path = tmp_path / "throttle.sqlite"
    shutil.copy(sqlite_template, path)
    with gunicorn(f"sqlite:///{path}", free_port(), workers=2,
                  env={"RATELIMIT_STORAGE_URI": storage}) as base:
        browser = Browser(base)
        token = browser.csrf("/login")
        answers = []
        for _ in range(8):
            answers += _in_parallel(lambda: browser.post(
                "/login", {"login": "nobody", "password": "wrong", "csrf_token": token}))
    assert len({pid for _status, pid, _text in answers}) == 2, "only one worker answered"
    let_through = [status for status, _pid, _text in answers if status != 429]
    # The login form allows 10 attempts a minute per address (webapp/auth/views.py); 24 were made.
    assert 0 < len(let_through) <= 10
