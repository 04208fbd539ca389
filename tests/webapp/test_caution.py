"""Every page, for every role, shows the caution and never fails."""
import pytest

from models.people.tables import Role
from webapp.formatting import CAUTION


def _plain_get_urls(app):
    """Every GET route that needs no arguments."""
    return sorted(r.rule for r in app.url_map.iter_rules()
                  if "GET" in r.methods and not r.arguments and not r.rule.startswith("/static")
                  and not r.rule.startswith("/api/"))


@pytest.mark.parametrize("role", list(Role))
def test_caution_on_every_page(app, make_person, make_instrument, login, role):
    make_instrument()
    client = login(make_person(roles=(role,)))
    for url in _plain_get_urls(app):
        response = client.get(url)
        assert response.status_code in (200, 302, 403), f"{url}: {response.status_code}"
        if response.status_code != 302 and response.mimetype == "text/html":
            assert CAUTION.encode() in response.data, url
