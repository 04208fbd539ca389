"""Repeated login attempts from one address are slowed down."""
import pytest


@pytest.fixture
def app_config():
    return {"RATELIMIT_ENABLED": True}


def test_eleventh_attempt_in_a_minute_is_refused(client, make_person):
    person = make_person()
    statuses = [client.post("/login", data={"login": person.login, "password": "guess"}).status_code
                for _ in range(11)]
    assert statuses[:10] == [200] * 10
    assert statuses[10] == 429
