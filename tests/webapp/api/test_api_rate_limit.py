"""The API limits each token's request rate and says so as a problem document."""
import pytest


@pytest.fixture
def app_config():
    return {"RATELIMIT_ENABLED": True}


def test_too_many_requests_from_one_token_get_429(client, make_instrument, api_token):
    headers = {"Authorization": f"Bearer {api_token(make_instrument())}"}
    statuses = [client.get("/api/v1/sessions", headers=headers).status_code for _ in range(121)]
    assert statuses[:120] == [200] * 120
    response = client.get("/api/v1/sessions", headers=headers)
    assert response.status_code == 429 and response.mimetype == "application/problem+json"
