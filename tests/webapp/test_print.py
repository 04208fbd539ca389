"""Pages people print fit A4 and Letter in portrait: Chromium's own PDF output, on the demo lab."""
import io
from datetime import date

import pytest
import sqlalchemy as sa
from pypdf import PdfReader

from models.exposure.investigation_ops import raise_investigations
from models.exposure.lab_ops import evaluate_lab
from models.instruments.tables import Instrument
from models.people.person_ops import find_person
from tests.conftest import PASSWORD_HASH, browser_log_in
from webapp.demo.lab import HIGH_DOSE_PERSON, SAFETY_OFFICER, load_demo_lab
from webapp.extensions import db

pytestmark = pytest.mark.browser
DEMO_DAY = date(2026, 11, 30)
# Printable width at 96 px per inch: A4 is 210 mm and Letter 215.9 mm wide, less 2 x 15 mm margins.
PRINTABLE_PX = {"A4": round((210 - 30) / 25.4 * 96), "Letter": round((215.9 - 30) / 25.4 * 96)}
# Pages a printout may take: the exposure page and an investigation are read at a desk, so a few.
MAX_PAGES = {"exposure": 4, "people": 3, "authorised": 2, "due": 4, "investigation": 3}


@pytest.fixture
def demo_server(live_server):
    url, app = live_server
    with app.app_context():
        load_demo_lab(db.session, DEMO_DAY, PASSWORD_HASH)
        db.session.commit()
        raise_investigations(db.session, evaluate_lab(db.session, DEMO_DAY))
        db.session.commit()
        person = find_person(db.session, HIGH_DOSE_PERSON).id
        instrument = db.session.scalar(sa.select(Instrument.id).order_by(Instrument.id).limit(1))
        investigation = db.session.scalar(sa.text("SELECT min(id) FROM investigation"))
    return url, {"exposure": f"/exposure/person/{person}", "people": "/exposure/people",
                 "authorised": f"/instruments/{instrument}/authorised/print", "due": "/due",
                 "investigation": f"/exposure/investigations/{investigation}"}


@pytest.mark.parametrize("paper", ["A4", "Letter"])
def test_printed_pages_fit_the_paper(browser, demo_server, paper):
    url, pages = demo_server
    context = browser.new_context(viewport={"width": PRINTABLE_PX[paper], "height": 900})
    page = context.new_page()
    browser_log_in(page, url, SAFETY_OFFICER)
    page.emulate_media(media="print")
    try:
        for name, path in pages.items():
            page.goto(url + path)
            too_wide = page.evaluate("document.documentElement.scrollWidth - window.innerWidth")
            assert too_wide <= 0, f"{name} is {too_wide}px wider than {paper} paper"
            printed = PdfReader(io.BytesIO(page.pdf(format=paper)))
            assert 1 <= len(printed.pages) <= MAX_PAGES[name], (name, paper, len(printed.pages))
    finally:
        context.close()
