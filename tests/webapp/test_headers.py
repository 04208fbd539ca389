"""Security headers on every response; no inline script or style for the policy to block."""
import re
from datetime import date
from pathlib import Path

import pytest

from models.people.person_ops import find_person
from models.people.tables import Role
from tests.conftest import PASSWORD_HASH, browser_log_in
from webapp.demo.lab import load_demo_lab
from webapp.extensions import db

TEMPLATES = sorted(Path("webapp").rglob("*.html"))


def _assert_security_headers(response) -> None:
    policy = response.headers["Content-Security-Policy"]
    assert "frame-ancestors 'none'" in policy
    assert "'unsafe-inline'" not in policy.split("style-src")[0]  # never for scripts
    assert response.headers["X-Content-Type-Options"] == "nosniff"
    assert response.headers["X-Frame-Options"] == "DENY"
    assert response.headers["Referrer-Policy"] == "same-origin"


def test_every_kind_of_response_carries_the_headers(make_person, login, client):
    operator = login(make_person("op", roles=(Role.OPERATOR,)))
    for response in (client.get("/login"), client.get("/static/logbook.css"), operator.get("/"),
                     operator.get("/no-such-page"), client.get("/api/v1/sessions"),
                     client.get("/api/v1/openapi.json")):
        _assert_security_headers(response)
        response.close()  # the static file is streamed from an open file
    assert "Strict-Transport-Security" not in operator.get("/").headers


def test_personal_pages_are_not_cached_and_static_files_are(make_person, login, client):
    operator = login(make_person("op", roles=(Role.OPERATOR,)))
    for url in ("/", "/exposure/me", "/doses/pregnancy"):
        response = operator.get(url, follow_redirects=True)
        assert response.status_code == 200, url
        assert response.headers["Cache-Control"] == "no-store", url
    with client.get("/static/logbook.css") as static:
        assert "no-store" not in static.headers.get("Cache-Control", "")


@pytest.mark.parametrize("app_config", [{"SESSION_COOKIE_SECURE": True}])
def test_hsts_is_sent_when_cookies_are_secure(client):
    assert client.get("/login").headers["Strict-Transport-Security"].startswith("max-age=")


@pytest.mark.parametrize("template", TEMPLATES, ids=lambda p: str(p))
def test_no_template_has_inline_script_style_or_handlers(template):
    html = template.read_text(encoding="utf-8")
    assert not re.search(r"<script(?![^>]*\bsrc=)", html), "inline <script>"
    assert not re.search(r"<style\b", html), "inline <style>"
    assert not re.search(r"\sstyle\s*=", html), "style attribute"
    assert not re.search(r"\son[a-z]+\s*=", html), "event handler attribute"
    assert "javascript:" not in html


@pytest.mark.browser
def test_the_browser_reports_no_policy_violation_on_the_busiest_pages(page, live_server):
    url, app = live_server
    with app.app_context():
        load_demo_lab(db.session, date(2026, 11, 20), PASSWORD_HASH)
        db.session.commit()
        subject = find_person(db.session, "lbrandt").id
    violations = []
    page.on("console", lambda message: violations.append(message.text)
            if "Content Security Policy" in message.text else None)
    browser_log_in(page, url, "okessler")
    for path in ("/", f"/exposure/person/{subject}", "/instruments/1/authorised/print"):
        page.goto(url + path)
    assert violations == []
