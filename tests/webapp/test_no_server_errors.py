"""Guessed ids and junk parameters on every page get an answer, never a server error."""
from datetime import date

import pytest
from werkzeug.routing import IntegerConverter

from models.people.person_ops import find_person
from tests.conftest import PASSWORD_HASH
from webapp.demo.lab import load_demo_lab
from webapp.extensions import db

JUNK = {"on": "31/02/2026", "from": "yesterday", "to": "2026-13-01", "page": "-3",
        "person": "abc", "instrument": "9x", "sort": "'; drop table person; --", "all": "maybe"}


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
        for query in ("", "?" + "&".join(f"{k}={v}" for k, v in JUNK.items())):
            status = client.get(url + query).status_code
            if status >= 500:
                failures.append(f"{url}{query} -> {status}")
    assert failures == []
