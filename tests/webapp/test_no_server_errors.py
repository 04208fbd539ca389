"""Guessed ids, junk parameters, fuzzed forms and fuzzed API calls get an answer, never a server error."""
import json
import os
import re
from datetime import date

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from werkzeug.routing import AnyConverter, IntegerConverter

from models.people.person_ops import find_person
from tests.conftest import PASSWORD_HASH
from webapp.demo.lab import load_demo_lab
from webapp.extensions import db

# Examples per fuzz test, kept small so the suite stays quick; raise them for a longer hunt.
FORM_EXAMPLES = int(os.environ.get("FUZZ_FORM_EXAMPLES", "150"))
API_EXAMPLES = int(os.environ.get("FUZZ_API_EXAMPLES", "150"))

JUNK = {"on": "31/02/2026", "from": "yesterday", "to": "2026-13-01", "page": "-3",
        "person": "abc", "instrument": "9x", "sort": "'; drop table person; --", "all": "maybe"}
# Values that parse but are out of every range: 40-digit ids, the last day of year 9999, a NUL byte.
HUGE = {"on": "9999-12-31", "from": "0001-01-01", "to": "9999-12-31", "page": "9" * 40, "person": "9" * 40,
        "instrument": "9" * 40, "instrument_id": "9" * 40, "limit": "9" * 40, "trigger": "a\x00b",
        "sort": "%00", "layout": "9" * 40}


def _urls(app) -> list[str]:
    """Every GET route, with ids that exist (1) and ids that do not (999999)."""
    urls = []
    for rule in app.url_map.iter_rules():
        if "GET" not in rule.methods or rule.rule.startswith(("/static", "/api/")):
            continue
        for guess in (1, 999999):
            values = {name: guess if isinstance(conv, IntegerConverter) else "nonsense"
                      for name, conv in rule._converters.items()}
            urls.append(rule.build(values)[1])
    return sorted(set(urls))


@pytest.mark.parametrize("login_name", ["okessler", "lbrandt", "mwinter"])
def test_no_page_fails(app, login, login_name):
    load_demo_lab(db.session, date(2026, 11, 20), PASSWORD_HASH)
    db.session.commit()
    client = login(find_person(db.session, login_name))
    failures = []
    for url in _urls(app):
        for query in ({}, JUNK, HUGE):
            status = client.get(url, query_string=query).status_code
            if status >= 500:
                failures.append(f"{url}{query} -> {status}")
    assert failures == []


# --- property-based fuzzing of every form and of the API (hypothesis) ---

HOSTILE = ["", " ", "0", "-1", "1", "2", "3.5", "9" * 40, "-" + "9" * 40, "1e999", "-1e999", "inf", "nan",
           "1e308", "0001-01-01", "9999-12-31", "1949-12-31", "2101-01-01", "2026-02-30", "2026-03-29T02:30",
           "2026-10-25T02:30", "9999-12-31T23:59", "0001-01-01T00:00", "2026-11-19T10:00", "2026-11-19",
           "a\x00b", "\x00", "line\r\nBcc: x@example.org", "\u2028", "x" * 6000, "<script>alert(1)</script>",
           "'; drop table person; --", "operator", "safety_officer", "pass", "fail", "na", "y", "on",
           "Hp(10)", "whole_body", "mSv", "uSv/h", "mrem/h", "surface", "housing", "Europe/Berlin", "Cu",
           "okessler", "lbrandt", "periodic", "measured", "ok@example.org"]
# Field names the forms use; each route also gets the names its own page shows.
COMMON_FIELDS = ["reason", "note", "name", "email", "roles", "category", "login", "password", "confirm",
                 "kv", "ma", "purpose", "started_at", "ended_at", "beam_on_minutes", "instrument",
                 "instrument_id", "meter_id", "performed_at", "value", "wear_start", "wear_end",
                 "declared_on", "ended_on", "serial", "calibrated_on", "calibration_interval_months",
                 "check_interval_days", "survey_interval_days", "max_kv", "due_soon_days", "timezone",
                 "points-0-reading", "points-0-location", "points-0-level", "devices", "window_start",
                 "window_end", "occurred_at", "description", "type", "limit_msv", "level1_value", "text"]
# Routes that end the fuzzing client's own login are left out: they would only test the login page.
SKIPPED = {"/logout"}
VALUES = st.one_of(st.sampled_from(HOSTILE), st.text(max_size=40))


def _post_routes(app) -> list[str]:
    """Every POST route outside the API, with ids that exist, do not exist, and could not exist."""
    urls = []
    for rule in app.url_map.iter_rules():
        if "POST" not in rule.methods or rule.rule.startswith(("/static", "/api/v1/")):
            continue
        for guess in (1, 2, 999999):
            values = {name: guess if isinstance(conv, IntegerConverter)
                      else sorted(conv.items)[0] if isinstance(conv, AnyConverter) else "declare"
                      for name, conv in rule._converters.items()}
            urls.append(rule.build(values)[1])
    return sorted(set(urls) - SKIPPED)


def _field_names(client, url: str) -> list[str]:
    """The names of the inputs the page at this address shows (none when it has no page)."""
    response = client.get(url)
    names = re.findall(r'name="([^"]+)"', response.get_data(as_text=True)) if response.status_code == 200 else []
    return sorted(set(names) - {"csrf_token"})


@pytest.mark.parametrize("login_name", ["okessler", "jfeld"])
def test_fuzzed_form_posts_never_fail(app, login, login_name):
    load_demo_lab(db.session, date(2026, 11, 20), PASSWORD_HASH)
    db.session.commit()
    client = login(find_person(db.session, login_name))
    routes = _post_routes(app)
    fields = {url: sorted(set(_field_names(client, url)) | set(COMMON_FIELDS)) for url in routes}

    @settings(max_examples=FORM_EXAMPLES, deadline=None, database=None,
              suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
    @given(data=st.data())
    def post_anything(data):
        url = data.draw(st.sampled_from(routes), label="url")
        names = data.draw(st.lists(st.sampled_from(fields[url]), max_size=12, unique=True), label="fields")
        form = {name: data.draw(VALUES, label=name) for name in names}
        response = client.post(url, data=form)
        assert response.status_code < 500, f"{url} {form!r} -> {response.status_code}"

    post_anything()


JSON_SCALARS = st.one_of(st.none(), st.booleans(), st.integers(min_value=-(10**40), max_value=10**40),
                         st.floats(allow_nan=True, allow_infinity=True), st.sampled_from(HOSTILE),
                         st.text(max_size=30))
JSON_VALUES = st.recursive(JSON_SCALARS, lambda inner: st.one_of(st.lists(inner, max_size=4),
                                                                 st.dictionaries(st.text(max_size=8), inner, max_size=4)),
                           max_leaves=12)
API_KEYS = ["operator", "kv", "ma", "purpose", "pre_use_checks_confirmed", "dosimeter_worn", "dosimeter",
            "alignment", "configuration_changed", "configuration_change", "notes", "caution_acknowledged",
            "started_at", "ended_at", "beam_on_minutes"]


def test_fuzzed_api_requests_never_fail_and_errors_are_problems(
        app, client, make_person, make_instrument, authorise, api_token):
    operator = make_person("op")
    instrument = make_instrument()
    authorise(operator, instrument, trained_on=date(2026, 1, 5), refresher_due=date(2099, 1, 1))
    headers = {"Authorization": f"Bearer {api_token(instrument)}"}
    paths = ["/api/v1/sessions", "/api/v1/sessions/finished", "/api/v1/sessions/1/close",
             f"/api/v1/sessions/{'9' * 40}/close", "/api/v1/sessions/1"]

    @settings(max_examples=API_EXAMPLES, deadline=None, database=None,
              suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
    @given(path=st.sampled_from(paths), method=st.sampled_from(["POST", "POST", "POST", "GET", "PUT"]),
           body=st.one_of(st.dictionaries(st.sampled_from(API_KEYS), JSON_VALUES, max_size=10), JSON_VALUES),
           query=st.dictionaries(st.sampled_from(["from", "to", "limit"]), st.sampled_from(HOSTILE), max_size=3))
    def call_anything(path, method, body, query):
        text = json.dumps(body, allow_nan=True)
        response = client.open(path, method=method, data=text, query_string=query,
                               headers={**headers, "Content-Type": "application/json"})
        assert response.status_code < 500, f"{method} {path} {text[:300]} -> {response.status_code}"
        if response.status_code >= 400:
            assert response.mimetype == "application/problem+json", f"{method} {path} -> {response.mimetype}"

    call_anything()
