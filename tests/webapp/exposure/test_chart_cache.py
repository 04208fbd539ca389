"""The exposure chart is drawn once per person, date and version of its inputs."""
from datetime import date

import pytest

from models.people.tables import Role
from tests.conftest import put_in_force
from webapp.exposure import pages
from webapp.exposure.chart_cache import charts

ON = "2025-12-31"


@pytest.fixture
def drawn(monkeypatch):
    """The people whose chart was drawn (not taken from the cache), in order."""
    charts.clear()
    calls = []
    draw = pages._draw_chart
    monkeypatch.setattr(pages, "_draw_chart", lambda person_id, on: calls.append(person_id) or draw(person_id, on))
    yield calls
    charts.clear()


def test_a_new_dose_record_draws_the_chart_again(session, make_person, make_dose, login, drawn):
    put_in_force(session, "icrp103")
    session.commit()
    ada = make_person("ada")
    make_dose(ada, wear_start=date(2025, 3, 1), wear_end=date(2025, 3, 31), value=0.4)
    client = login(make_person("rso", roles=(Role.SAFETY_OFFICER,)))
    url = f"/exposure/person/{ada.id}/chart.svg?on={ON}"

    first = client.get(url)
    again = client.get(url)
    assert first.status_code == again.status_code == 200 and first.data == again.data
    assert drawn == [ada.id]  # the second view came from the cache
    assert client.get(url, headers={"If-None-Match": first.headers["ETag"]}).status_code == 304
    assert "no-store" in first.headers["Cache-Control"]  # dose data stays off disks

    make_dose(ada, wear_start=date(2025, 4, 1), wear_end=date(2025, 4, 30), value=0.6)
    changed = client.get(url)
    assert drawn == [ada.id, ada.id]
    # April's bar (0.6 mSv) is new: the drawing differs, and so does its version.
    assert changed.headers["ETag"] != first.headers["ETag"] and changed.data != first.data


def test_the_cache_never_skips_the_access_check(session, make_person, make_dose, login, drawn):
    ada, bo = make_person("ada"), make_person("bo")
    make_dose(ada, value=0.4)
    assert login(ada).get(f"/exposure/person/{ada.id}/chart.svg").status_code == 200
    assert login(bo).get(f"/exposure/person/{ada.id}/chart.svg").status_code == 403
