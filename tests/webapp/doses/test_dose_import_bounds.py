"""Size bounds of a dosimetry import: the upload limit, a short preview, a bounded read."""
import time
import tracemalloc

import pytest

from models.core.errors import Invalid
from models.doses.import_ops import MAX_ROWS, read_csv
from models.people.tables import Role
from tests.models.doses.test_dose_import import HEADER, report

OFFICER = (Role.SAFETY_OFFICER,)
ROW = "ghost,,2026-01-01,2026-01-31,Hp(10),whole_body,0.10,mSv,measured,\n"


@pytest.fixture
def app_config(tmp_path):
    """Keep uploaded reports in the test's own folder."""
    return {"DOSE_IMPORT_FOLDER": str(tmp_path / "imports")}


BOUNDARY = "report-boundary"


def _upload(client, data: bytes):
    """Post the report as a multipart body built in memory.

    Given a file, werkzeug's test client spools a body over 500 kB to a temporary file that it never
    closes; its ResourceWarning then fails whichever later test the garbage collector runs in.
    """
    body = (f'--{BOUNDARY}\r\nContent-Disposition: form-data; name="layout"\r\n\r\n\r\n'
            f'--{BOUNDARY}\r\nContent-Disposition: form-data; name="file"; filename="report.csv"\r\n'
            f"Content-Type: text/csv\r\n\r\n").encode() + data + f"\r\n--{BOUNDARY}--\r\n".encode()
    return client.post("/doses/import", data=body, content_type=f"multipart/form-data; boundary={BOUNDARY}",
                       follow_redirects=True)


def test_the_import_form_states_the_limits(make_person, login):
    page = login(make_person("rso", roles=OFFICER)).get("/doses/import").text
    assert f"At most 10 MB and {MAX_ROWS:,} rows" in page


def test_an_upload_over_the_limit_is_refused_with_the_limit_named(make_person, login):
    client = login(make_person("rso", roles=OFFICER))
    response = _upload(client, b"x" * (11 * 1024 * 1024))  # 11 MB against the 10 MB default
    assert response.status_code == 413
    assert "larger than this logbook accepts (10 MB)" in response.text


def test_the_preview_of_a_large_bad_file_shows_counts_and_the_first_problems(make_person, login):
    client = login(make_person("rso", roles=OFFICER))
    rows = [ROW.strip()] * 2000  # every row names an unknown wearer
    page = _upload(client, report(rows)).text
    assert "<strong>2000 rows</strong>" in page and "2000 with errors" in page
    assert "The first 50 of 2000 rows with errors" in page
    assert page.count("Unknown wearer") == 50
    # The header is line 1, so the 50th row shown is line 51 and line 52 is not shown.
    assert '<td class="num">51</td>' in page and '<td class="num">52</td>' not in page
    assert len(page) < 100_000


def test_a_file_with_too_many_rows_is_refused_with_bounded_memory_and_time():
    # About 50 MB: 760,000 rows of 66 bytes, far beyond the row limit.
    data = (HEADER + ROW * 760_000).encode()
    assert len(data) > 50_000_000
    tracemalloc.start()
    started = time.perf_counter()
    try:
        with pytest.raises(Invalid) as refused:
            read_csv(data)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert f"more than {MAX_ROWS:,} rows" in refused.value.errors["file"]
    # Only the rows up to the limit are held: well under the file's own size.
    assert peak < 40_000_000, peak
    assert time.perf_counter() - started < 30
