"""Accounts: sessions that end on the server, time limits, passwords, resets and login throttling."""
import re
import subprocess
import sys
import uuid
from datetime import UTC, datetime, timedelta

import pytest
import redis
from flask import g

from models.people.tables import Role
from tests.conftest import PASSWORD
from webapp.auth import reset
from webapp.passwords import password_problem

NEW_PASSWORD = "quartz lantern orbit meadow"


def _captured(app, client):
    """A second client holding a copy of this client's session cookie, as a thief would."""
    thief = app.test_client()
    thief.set_cookie("session", client.get_cookie("session").value)
    return thief


def _home_status(client) -> int:
    """Status of the home page for this client (302 to the login page once the session ended)."""
    g.pop("_login_user", None)
    return client.get("/").status_code


def test_a_cookie_captured_before_logout_stops_working(app, make_person, login):
    client = login(make_person())
    thief = _captured(app, client)
    assert _home_status(thief) == 200
    client.post("/logout")
    assert _home_status(thief) == 302


def test_logout_ends_every_session_of_the_person(make_person, login):
    person = make_person()
    desk, lab_pc = login(person), login(person)
    desk.post("/logout")
    assert _home_status(lab_pc) == 302


def test_a_password_change_ends_the_other_sessions_and_keeps_this_one(session, make_person, login):
    person = make_person()
    here, elsewhere = login(person), login(person)
    response = here.post("/account/password", data={
        "current": PASSWORD, "password": NEW_PASSWORD, "confirm": NEW_PASSWORD})
    assert response.status_code == 302
    assert _home_status(here) == 200
    assert _home_status(elsewhere) == 302


def test_a_wrong_current_password_changes_nothing(session, make_person, login):
    person = make_person()
    client = login(person)
    before = person.password_hash
    response = client.post("/account/password", data={
        "current": "not my password", "password": NEW_PASSWORD, "confirm": NEW_PASSWORD})
    assert "This is not your current password." in response.text
    session.refresh(person)
    assert person.password_hash == before


def test_deactivation_and_a_role_change_end_the_persons_sessions(make_person, login):
    admin = login(make_person(roles=(Role.ADMIN,)))
    leaver, promoted = make_person(), make_person()
    leaver_client, promoted_client = login(leaver), login(promoted)
    admin.post(f"/people/{leaver.id}/active", data={"reason": "left the group"})
    admin.post(f"/people/{promoted.id}", data={
        "name": promoted.name, "email": promoted.email, "roles": ["operator", "admin"],
        "category": "adult_worker"})
    assert _home_status(leaver_client) == 302
    assert _home_status(promoted_client) == 302


@pytest.mark.parametrize("key", ["_login_seen", "_login_started"], ids=["idle", "too old"])
def test_an_idle_or_old_session_ends(make_person, login, key):
    client = login(make_person())
    with client.session_transaction() as flask_session:
        # 2020-01-01 is older than any idle timeout (at most a day) or lifetime (at most 30 days).
        flask_session[key] = datetime(2020, 1, 1, tzinfo=UTC).timestamp()
    assert _home_status(client) == 302


def test_the_session_limits_are_lab_settings_with_ranges(make_person, login, session):
    client = login(make_person(roles=(Role.SAFETY_OFFICER,)))
    page = client.get("/settings/").text
    assert "default 480, a working day" in page and "default 168, a week" in page
    response = client.post("/settings/", data={
        "lab_name": "Lab", "timezone": "UTC", "display_unit": "mSv", "due_soon_days": 7,
        "idle_timeout_minutes": 0, "session_lifetime_hours": 100000})
    assert "Between 5 and 1440 minutes." in response.text
    assert "Between 1 and 720 hours." in response.text


@pytest.mark.parametrize("password, refused", [
    ("aaaaaaaaaa", "Repeats"),                 # the example: ten of one letter
    ("short1!", "at least 10 characters"),
    ("Password123!", "commonly used password"),
    ("mwinter2026", "too easy to guess"),       # the login and a year
    ("mara.winter@example.org", "too easy to guess"),  # the person's own address
    (NEW_PASSWORD, None),
    ("x" * 201, "at most 200 characters"),
])
def test_passwords_are_checked_for_length_and_guessability(password, refused):
    problem = password_problem(password, "mwinter", "Mara Winter", "mara.winter@example.org")
    if refused is None:
        assert problem is None
    else:
        assert refused.lower() in problem.lower()


def test_a_weak_new_password_is_refused_beside_the_field(make_person, login):
    client = login(make_person())
    response = client.post("/account/password", data={
        "current": PASSWORD, "password": "aaaaaaaaaa", "confirm": "aaaaaaaaaa"})
    assert response.status_code == 200
    assert 'role="alert">Repeats like' in response.text


@pytest.fixture
def app_config(request):
    if "smtp_server" in request.fixturenames:
        return request.getfixturevalue("mail_app_config")
    return {}


def _reset_link(mailbox) -> str:
    """The path of the reset link in the last e-mail."""
    body = mailbox.messages[-1].get_content()
    return re.search(r"https?://[^/\s]+(/account/reset/\S+)", body)[1]


def test_a_reset_link_works_once(app, client, session, make_person, smtp_server):
    _, mailbox = smtp_server
    person = make_person(email="ada@example.org")
    response = client.post("/account/reset", data={"login": person.login})
    assert response.status_code == 302
    assert mailbox.messages[-1]["To"] == "ada@example.org"
    path = _reset_link(mailbox)
    assert client.get(path).status_code == 200
    assert client.post(path, data={"password": NEW_PASSWORD, "confirm": NEW_PASSWORD}).status_code == 302
    assert client.post("/login", data={"login": person.login, "password": NEW_PASSWORD}).status_code == 302
    again = app.test_client().post(path, data={"password": "another quite long phrase",
                                               "confirm": "another quite long phrase"})
    assert again.status_code == 410 and "no longer valid" in again.text


def test_a_reset_request_does_not_tell_whether_the_login_exists(client, make_person, smtp_server):
    _, mailbox = smtp_server
    make_person("known")
    known = client.post("/account/reset", data={"login": "known"}, follow_redirects=True).text
    unknown = client.post("/account/reset", data={"login": "nobody"}, follow_redirects=True).text
    assert reset.RESET_SENT_MARK in known and reset.RESET_SENT_MARK in unknown
    assert len(mailbox.messages) == 1


def test_a_reset_link_expires_within_an_hour(app, make_person):
    person = make_person()
    issued = datetime(2026, 3, 2, 9, 0, tzinfo=UTC)
    with app.test_request_context():
        token = reset.make_token(person, issued)
        assert reset.person_for(token, issued + timedelta(minutes=59)) == person
        assert reset.person_for(token, issued + timedelta(minutes=60, seconds=1)) is None
        assert reset.person_for(token[:-2] + "xx", issued) is None  # forged
    # A link issued long ago, opened now.
    assert app.test_client().get(f"/account/reset/{token}").status_code == 410


def test_set_password_from_the_command_line(app, session, make_person, login):
    person = make_person("ada")
    client = login(person)
    runner = app.test_cli_runner()
    weak = runner.invoke(args=["people", "set-password", "ada", "--password-stdin"], input="aaaaaaaaaa\n")
    assert weak.exit_code != 0 and "password: Repeats" in weak.output
    strong = runner.invoke(args=["people", "set-password", "ada", "--password-stdin"],
                           input=NEW_PASSWORD + "\n")
    assert strong.exit_code == 0, strong.output
    assert _home_status(client) == 302  # their sessions ended
    unknown = runner.invoke(args=["people", "set-password", "nobody", "--password-stdin"], input="x\n")
    assert unknown.exit_code != 0 and "login: nobody has the login 'nobody'" in unknown.output


class TestThrottle:
    @pytest.fixture
    def app_config(self):
        return {"RATELIMIT_ENABLED": True}

    def test_one_account_is_throttled_across_addresses(self, client, make_person):
        person = make_person()
        statuses = [client.post("/login", data={"login": person.login, "password": "guess"},
                                environ_base={"REMOTE_ADDR": f"10.0.0.{n}"}).status_code
                    for n in range(11)]
        # 10 per 15 minutes per account, each address well under its own 10 per minute.
        assert statuses == [200] * 10 + [429]


class TestBehindAProxy:
    @pytest.fixture
    def app_config(self):
        return {"RATELIMIT_ENABLED": True, "PROXY_HOPS": 1}

    def test_each_client_behind_the_proxy_has_its_own_count(self, client):
        def attempt(n: int, address: str) -> int:
            return client.post("/login", data={"login": f"nobody{n}", "password": "guess"},
                               environ_base={"REMOTE_ADDR": "127.0.0.1"},
                               headers={"X-Forwarded-For": address}).status_code
        # 10 a minute per address (different logins, so the per-account count stays low).
        first = [attempt(n, "10.0.0.1") for n in range(11)]
        assert first == [200] * 10 + [429]
        # Another client through the same proxy is not held to the first one's count.
        assert attempt(11, "10.0.0.2") == 200


_WORKER = """
import sys
from tests.conftest import base_config
from webapp import create_app
url, storage, prefix, attempts = sys.argv[1], sys.argv[2], sys.argv[3], int(sys.argv[4])
app = create_app(base_config(url, RATELIMIT_ENABLED=True, RATELIMIT_STORAGE_URI=storage,
                             RATELIMIT_KEY_PREFIX=prefix))
client = app.test_client()
through = sum(client.post("/login", data={"login": "nobody", "password": "guess"}).status_code != 429
              for _ in range(attempts))
print(through)
"""


def _workers_let_through(url: str, storage: str, prefix: str) -> list[int]:
    """Two worker processes, 15 attempts each on one account from one address; how many got through."""
    workers = [subprocess.Popen([sys.executable, "-c", _WORKER, url, storage, prefix, "15"],
                                stdout=subprocess.PIPE, text=True) for _ in range(2)]
    return [int(w.communicate(timeout=120)[0].strip()) for w in workers]


def test_two_workers_sharing_redis_let_through_no_more_than_the_limit(sqlite_template):
    try:
        redis.Redis(host="127.0.0.1", port=6379, socket_connect_timeout=2).ping()
    except redis.ConnectionError as error:
        pytest.skip(f"Redis unreachable at 127.0.0.1:6379: {error}")
    url = f"sqlite:///{sqlite_template}"
    prefix = f"logbook-test-{uuid.uuid4().hex}"
    shared = _workers_let_through(url, "redis://127.0.0.1:6379", prefix)
    # Per address 10 a minute and per account 10 per 15 minutes: 10 of the 30 attempts in all.
    assert sum(shared) == 10, shared
    # Without shared storage each worker counts alone: why several workers need Redis.
    assert sum(_workers_let_through(url, "memory://", prefix)) == 20
