"""A demo lab of our own invention: people, instruments and two years of records ending today.

Everything here is made up (the lab, its people, serials and numbers). The generator is
deterministic for a given `today`: one numpy generator with a fixed seed draws every random
choice in a fixed order. Dates are relative to `today` so the demo always looks current.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from datetime import UTC, date, datetime, time, timedelta
from zoneinfo import ZoneInfo

import numpy as np
import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.checks.tables import CheckItemResult, ItemResult, SafetyCheck
from models.core.bounds import EARLIEST
from models.core.codes import Location, Quantity, Result, WorkerCategory
from models.core.due_dates import add_months, refresher_due
from models.core.settings import lab_settings
from models.doses.tables import DoseRecord, DoseSource, Dosimeter, DosimeterKind, Hand
from models.exposure.limit_set_ops import install_preset
from models.exposure.rules_ops import choose_limit_set
from models.exposure.tables import PregnancyDeclaration
from models.incidents.tables import Incident, IncidentNote, IncidentType
from models.instruments.instrument_ops import mark_commissioned, save_instrument, set_out_of_service
from models.instruments.tables import (
    Authorisation,
    AuthorisationLevel,
    ChecklistItem,
    ChecklistTemplate,
    Enclosure,
    Instrument,
    InstrumentKind,
)
from models.people.person_ops import add_person
from models.people.tables import Person, Role
from models.sessions.tables import InstrumentSession
from models.surveys.tables import (
    BypassPermit,
    PermitStatus,
    PointLevel,
    Survey,
    SurveyMeter,
    SurveyPoint,
    SurveyTask,
    SurveyTrigger,
)

SEED = 20_261_201
DEMO_PASSWORD = "demo-password-2026"
LAB_NAME = "Materials Characterisation Lab, University of Ostrand (demo)"
LAB_ZONE = "Europe/Berlin"
# A lab in the EU works to the Euratom limits.
LIMIT_PRESET = "euratom2013"
YEARS_DAYS = 730
BATCH = 1000

# Minimum reportable doses of the (fictional) dosimetry service: 0.1 mSv Hp(10) is the lower
# range in SSK 2009; 0.3 mSv for rings as in one US university programme (REFERENCE.md).
MRD_BODY_MSV = 0.1
MRD_RING_MSV = 0.3

# Common practice quarterly level I for Hp(10) is 1.25 mSv; the story puts one person above it.
HIGH_QUARTER_HP10_MSV = 1.6
HIGH_QUARTER_RING_RIGHT_MSV = 33.0
HIGH_QUARTER_RING_LEFT_MSV = 7.0

I, S = AuthorisationLevel.INDEPENDENT, AuthorisationLevel.SUPERVISED


@dataclass(frozen=True)
class DemoPerson:
    """One member of the demo lab and their part in the story."""

    login: str
    name: str
    roles: frozenset[Role]
    category: WorkerCategory
    story: str
    joined_days_ago: int = 900
    badge: bool = True
    rings: bool = False
    authorisations: dict[str, AuthorisationLevel] = field(default_factory=dict)

    @property
    def email(self) -> str:
        """A made-up address at the reserved example domain."""
        return f"{self.login}@example.org"


PEOPLE = (
    DemoPerson("mwinter", "Mara Winter", frozenset({Role.ADMIN}), WorkerCategory.ADULT_WORKER,
               "Lab manager: people, accounts, instruments", badge=False),
    DemoPerson("okessler", "Oskar Kessler", frozenset({Role.SAFETY_OFFICER, Role.OPERATOR}),
               WorkerCategory.ADULT_WORKER, "Radiation safety officer, also runs checks",
               authorisations={"pxrd": I, "scxrd": I, "open": I, "xrf": I, "saxs": I}),
    DemoPerson("jfeld", "Jonas Feld", frozenset({Role.OPERATOR, Role.ADMIN}),
               WorkerCategory.ADULT_WORKER, "Instrument scientist, also admin",
               authorisations={"pxrd": I, "scxrd": I, "xrf": I, "saxs": I}),
    DemoPerson("lbrandt", "Lena Brandt", frozenset({Role.OPERATOR}), WorkerCategory.ADULT_WORKER,
               "Postdoc, open-beam alignment; above an investigation level this quarter",
               rings=True, authorisations={"open": I, "pxrd": I, "saxs": I}),
    DemoPerson("pramos", "Paula Ramos", frozenset({Role.OPERATOR}), WorkerCategory.ADULT_WORKER,
               "PhD student, open-beam work; refresher training due within the week",
               rings=True, authorisations={"open": I, "pxrd": I}),
    DemoPerson("iokafor", "Ines Okafor", frozenset({Role.OPERATOR}), WorkerCategory.ADULT_WORKER,
               "PhD student, single-crystal work",
               authorisations={"scxrd": I, "pxrd": I}),
    DemoPerson("ydemir", "Yusuf Demir", frozenset({Role.OPERATOR}), WorkerCategory.ADULT_WORKER,
               "Technician, XRF and powder", authorisations={"xrf": I, "pxrd": I}),
    DemoPerson("ehale", "Emil Hale", frozenset({Role.OPERATOR}), WorkerCategory.TRAINEE,
               "School student on a placement (16-18), supervised", joined_days_ago=150,
               authorisations={"pxrd": S}),
    DemoPerson("sgray", "Sam Gray", frozenset({Role.OPERATOR}), WorkerCategory.PUBLIC,
               "Visiting teacher (member of the public), supervised, no dosimeter",
               joined_days_ago=20, badge=False, authorisations={"pxrd": S}),
)

SAFETY_OFFICER = "okessler"
HIGH_DOSE_PERSON = "lbrandt"
PREGNANT_PERSON = "iokafor"
REFRESHER_SOON = ("pramos", "open")
REFRESHER_SOON_DAYS = 5
# Whose Hp(10) result of which month (months before this one) the dosimetry service corrected.
CORRECTED = ("pramos", 8, 0.84, 0.14)
# The person who runs most checks on each instrument, besides the safety officer.
CHECKER = {"pxrd": "jfeld", "scxrd": "jfeld", "open": "lbrandt", "xrf": "ydemir", "saxs": "jfeld"}

ENCLOSED_CHECKLIST = (
    "Enclosure door interlock: opening the door with the shutter open closes the shutter",
    "Side service panel interlock: removing the panel switches off the high voltage",
    "Shutter-open indicator lights at the tube port when the shutter opens",
    "X-ray-on warning light on the enclosure lights when the tube is energised",
    "Warning light fail-safe: with the lamp disconnected the tube cannot be energised",
    "Emergency stop button switches off the high voltage",
    "Key switch: the generator cannot be energised without the key",
    "Radiation warning labels on housing and enclosure legible; room door posted",
)
OPEN_BEAM_CHECKLIST = (
    "Shutter-open indicator at port 1 lights when shutter 1 opens",
    "Shutter-open indicator at port 2 lights when shutter 2 opens",
    "Unused ports closed with blanking caps",
    "X-ray-on warning light at the tube housing lights when the tube is energised",
    "Warning light fail-safe: with the lamp disconnected the tube cannot be energised",
    "Beam-path guard in place; its interlock closes the shutter when it is lifted",
    "Emergency stop button switches off the high voltage",
    "Key switch: the generator cannot be energised without the key",
    "Radiation warning labels on the housing legible; room door posted",
)
XRF_CHECKLIST = (
    "Sample chamber lid interlock: lifting the lid closes the shutter",
    "Rear service panel interlock switches off the high voltage",
    "Shutter-open indicator lights when the shutter opens",
    "X-ray-on warning light lights when the tube is energised",
    "Warning light fail-safe: with the lamp disconnected the tube cannot be energised",
    "Emergency stop button switches off the high voltage",
    "Key switch: the generator cannot be energised without the key",
    "Radiation warning labels legible; room door posted",
)
# The open-beam item that failed once, a few months ago.
FAILED_ITEM = 1


@dataclass(frozen=True)
class DemoInstrument:
    """A demo instrument, how busy it is and what it is used for."""

    key: str
    values: dict
    checklist: tuple[str, ...]
    settings: tuple[tuple[float, float], ...]
    busy: float
    purposes: tuple[str, ...]
    last_check_days_ago: int
    alignment_settings: tuple[tuple[float, float], ...] = ()


def _values(name, kind, room, reg, anode, kv, ma, w, enclosure) -> dict:
    """An instrument's description in the form `save_instrument` takes."""
    return {"name": name, "kind": kind, "room": room, "registration_number": reg, "anode": anode,
            "max_kv": kv, "max_ma": ma, "max_power_w": w, "enclosure": enclosure,
            "check_interval_days": 30, "survey_interval_days": 365,
            "surface_action_level_usv_h": 2.5, "housing_action_level_usv_h": 25.0}


INSTRUMENTS = (
    DemoInstrument(
        "pxrd", _values("Powder diffractometer P1 (Cu)", InstrumentKind.POWDER_XRD, "C2.14",
                        "OST-RX-101", "Cu", 60.0, 60.0, 2200.0, Enclosure.ENCLOSED),
        ENCLOSED_CHECKLIST, ((40, 40), (40, 40), (40, 30), (45, 40)), 0.75,
        ("Phase identification, battery cathode powders", "Rietveld data, perovskite series",
         "Thin-film grazing incidence scan", "Quick phase check of student samples",
         "Variable-temperature series, zeolite"), 4),
    DemoInstrument(
        "scxrd", _values("Single-crystal diffractometer S1 (Mo)",
                         InstrumentKind.SINGLE_CRYSTAL_XRD, "C2.16", "OST-RX-102", "Mo",
                         50.0, 1.0, 50.0, Enclosure.ENCLOSED),
        ENCLOSED_CHECKLIST, ((50, 1.0), (50, 0.8), (50, 1.0), (45, 0.9)), 0.6,
        ("Structure determination, copper complex", "Unit-cell screening of new crystals",
         "Full data set, organic co-crystal", "Twinned crystal, second attempt"), 10),
    DemoInstrument(
        "open", _values("Open-beam Laue set-up L1 (Ag)", InstrumentKind.OPEN_BEAM, "C0.05",
                        "OST-RX-103", "Ag", 50.0, 40.0, 2000.0, Enclosure.OPEN_BEAM),
        OPEN_BEAM_CHECKLIST, ((40, 30), (45, 30), (40, 25)), 0.3,
        ("Laue orientation of a Si wafer", "Orienting a nickel single crystal for cutting",
         "Back-reflection Laue, quartz plate", "Camera tests with the new detector"), 15,
        alignment_settings=((20, 5), (25, 5), (30, 10))),
    DemoInstrument(
        "xrf", _values("XRF spectrometer F1 (Rh)", InstrumentKind.XRF, "C1.02", "OST-RX-104",
                       "Rh", 60.0, 160.0, 4000.0, Enclosure.ENCLOSED),
        XRF_CHECKLIST, ((50, 60), (30, 100), (40, 75)), 0.5,
        ("Fused beads, geology teaching set", "Pressed pellets, cement samples",
         "Trace metals in soil pellets"), 45),
    DemoInstrument(
        "saxs", _values("Small-angle camera K1 (Cu)", InstrumentKind.SAXS, "C2.18", "OST-RX-105",
                        "Cu", 50.0, 1.0, 50.0, Enclosure.ENCLOSED),
        ENCLOSED_CHECKLIST, ((50, 0.6), (50, 0.6), (45, 0.6)), 0.35,
        ("Micelle series in capillaries", "Nanoparticle size distribution",
         "Block copolymer films"), 12),
)
# The XRF's last passing check is the one overdue: 45 days ago against a 30-day interval.
OVERDUE_INSTRUMENT = "xrf"
OUT_OF_SERVICE = ("saxs", 9, "X-ray tube replaced; waiting for the survey after maintenance.")

ENCLOSED_POINTS = ("Door window, centre", "Door seal, left edge", "Door seal, right edge",
                   "Tube housing, top of enclosure", "Rear cable feed-through",
                   "Detector side panel")
OPEN_BEAM_POINTS = ("Tube housing, shutter 1 closed", "Tube housing, shutter 2 closed",
                    "Tube housing, rear", "Tube housing, cable end", "Beam stop, behind")


@dataclass
class DemoSummary:
    """What the loader wrote, for the command's report."""

    people: int = 0
    instruments: int = 0
    sessions: int = 0
    checks: int = 0
    surveys: int = 0
    dose_records: int = 0


def is_empty(session: Session) -> bool:
    """True when the database holds no person yet."""
    return session.scalar(sa.select(sa.func.count()).select_from(Person)) == 0


class _Writer:
    """Adds objects and flushes them in batches, counting what it wrote."""

    def __init__(self, session: Session):
        self.session = session
        self.pending = 0

    def add(self, obj) -> None:
        """Queue one object; flush when a batch is full."""
        self.session.add(obj)
        self.pending += 1
        if self.pending >= BATCH:
            self.flush()

    def flush(self) -> None:
        """Write what is queued."""
        self.session.flush()
        self.pending = 0


class _Lab:
    """The generator's state: the day the demo ends, the clock zone and the random source."""

    def __init__(self, session: Session, today: date, password_hash: str | None):
        self.session = session
        self.today = today
        self.start = today - timedelta(days=YEARS_DAYS)
        self.zone = ZoneInfo(LAB_ZONE)
        self.rng = np.random.default_rng(SEED)
        self.password_hash = password_hash
        self.writer = _Writer(session)
        self.people: dict[str, Person] = {}
        self.instruments: dict[str, Instrument] = {}
        self.badges: dict[tuple[str, str], Dosimeter] = {}
        self.blocked: dict[str, set[date]] = {d.key: set() for d in INSTRUMENTS}
        self.failed_on: date | None = None
        self.summary = DemoSummary()

    def at(self, day: date, hour: int, minute: int = 0) -> datetime:
        """A local wall-clock time in the lab, as UTC."""
        return datetime.combine(day, time(hour, minute), self.zone).astimezone(UTC)

    def weekday_on_or_before(self, day: date) -> date:
        """The day itself, or the Friday before when it falls on a weekend."""
        return day - timedelta(days=max(0, day.weekday() - 4))

    def joined(self, person: DemoPerson) -> date:
        """The day the person started in the lab."""
        return self.today - timedelta(days=person.joined_days_ago)


def load_demo_lab(session: Session, today: date, password_hash: str | None) -> DemoSummary:
    """Write the whole demo lab into an empty database; flushes, never commits."""
    lab = _Lab(session, today, password_hash)
    _settings(lab)
    _people(lab)
    _instruments(lab)
    _authorisations(lab)
    meters = _meters(lab)
    _dosimeters(lab)
    _checks(lab)
    _surveys_and_permit(lab, meters)
    _sessions(lab)
    _doses(lab)
    _pregnancy(lab)
    _incidents(lab)
    _out_of_service(lab, meters["current"])
    lab.writer.flush()
    return lab.summary


def _settings(lab: _Lab) -> None:
    """Name, time zone, limit set and safety officer address of the lab."""
    settings = lab_settings(lab.session)
    settings.lab_name = LAB_NAME
    settings.timezone = LAB_ZONE
    settings.safety_officer_email = f"{SAFETY_OFFICER}@example.org"
    # The demo's lab has made its choice: a set installed by default is replaced and unflagged.
    choose_limit_set(lab.session, settings, install_preset(lab.session, LIMIT_PRESET), from_on=EARLIEST,
                     reason="The demo lab works under this set.", today=lab.today, by=None)


def _people(lab: _Lab) -> None:
    """Everyone in the lab, sharing one password hash."""
    for p in PEOPLE:
        lab.people[p.login] = add_person(
            lab.session, login=p.login, name=p.name, email=p.email, roles=set(p.roles),
            category=p.category, password_hash=lab.password_hash)
    lab.summary.people = len(PEOPLE)


def _instruments(lab: _Lab) -> None:
    """The instruments with their own checklist templates."""
    for d in INSTRUMENTS:
        template = ChecklistTemplate(
            name=f"{d.values['name']} checklist",
            items=[ChecklistItem(position=i, text=text) for i, text in enumerate(d.checklist)])
        lab.session.add(template)
        lab.session.flush()
        instrument = save_instrument(lab.session, d.values)
        instrument.checklist_template_id = template.id
        # In use long before the demo's two years of records begin.
        mark_commissioned(lab.session, instrument, lab.at(lab.today - timedelta(days=3 * 365), 9))
        lab.instruments[d.key] = instrument
    lab.session.flush()
    lab.summary.instruments = len(INSTRUMENTS)


def _authorisations(lab: _Lab) -> None:
    """Who may run what; refreshers fall due a year after the last training."""
    officer = lab.people[SAFETY_OFFICER]
    for p in PEOPLE:
        for key, level in p.authorisations.items():
            if (p.login, key) == REFRESHER_SOON:
                # Due in 5 days: inside the lab's week of warning, so it shows as due soon.
                trained = add_months(lab.today + timedelta(days=REFRESHER_SOON_DAYS), -12)
            elif p.joined_days_ago < 365:
                trained = lab.joined(p)
            else:
                trained = lab.today - timedelta(days=int(lab.rng.integers(30, 330)))
            lab.writer.add(Authorisation(
                person_id=lab.people[p.login].id, instrument_id=lab.instruments[key].id,
                level=level, trained_on=trained, refresher_due=refresher_due(trained),
                granted_by_id=officer.id, granted_at=lab.at(trained, 16)))


def _meters(lab: _Lab) -> dict[str, SurveyMeter]:
    """Three survey meters: one retired, one out of calibration, one in calibration."""
    t = lab.today
    meters = {
        "old": SurveyMeter(serial="GM-0417", model="Pancake GM probe with ratemeter",
                           detector_type="Geiger-Mueller, pancake", correction_factor=1.0,
                           calibrated_on=add_months(t, -26),
                           retired_at=lab.at(add_months(t, -13), 12),
                           energy_response_notes="Over-responds below 20 keV; retired."),
        "lapsed": SurveyMeter(serial="IC-2290", model="Ion chamber survey meter",
                              detector_type="Ionisation chamber", correction_factor=1.2,
                              calibrated_on=add_months(t, -14),
                              energy_response_notes="Calibrated at 33 keV (Am-241 filtered); "
                                                    "factor 1.2 for Cu and Ag tube spectra."),
        "current": SurveyMeter(serial="GM-3051", model="Energy-compensated GM survey meter",
                               detector_type="Geiger-Mueller, energy-compensated",
                               correction_factor=1.0, calibrated_on=add_months(t, -4),
                               energy_response_notes="Flat within 30 % from 15 keV."),
    }
    for meter in meters.values():
        lab.session.add(meter)
    lab.session.flush()
    return meters


def _dosimeters(lab: _Lab) -> None:
    """A whole-body dosimeter for each X-ray worker, rings for the open-beam users."""
    serial = 1000
    for p in PEOPLE:
        kinds = [(DosimeterKind.WHOLE_BODY, None)] if p.badge else []
        if p.rings:
            kinds += [(DosimeterKind.RING, Hand.LEFT), (DosimeterKind.RING, Hand.RIGHT)]
        for kind, hand in kinds:
            serial += 1
            dosimeter = Dosimeter(serial=f"OST-{serial}", kind=kind, hand=hand,
                                  wearer_id=lab.people[p.login].id,
                                  issued_on=max(lab.joined(p), lab.start - timedelta(days=60)))
            lab.session.add(dosimeter)
            lab.badges[(p.login, hand.value if hand else kind.value)] = dosimeter
    lab.session.flush()


def _check(lab: _Lab, key: str, day: date, by: Person, failed_item: int | None = None,
           note: str | None = None) -> SafetyCheck:
    """One check of every checklist item; all pass unless one is named as failed."""
    instrument = lab.instruments[key]
    items = instrument.checklist_template.items
    results = [CheckItemResult(
        item_id=item.id, item_text=item.text,
        result=ItemResult.FAIL if i == failed_item else ItemResult.PASS,
        comment="Lamp does not light when the shutter opens; bulb burnt out."
        if i == failed_item else None) for i, item in enumerate(items)]
    check = SafetyCheck(instrument_id=instrument.id, performed_at=lab.at(day, 7, 30),
                        performed_by_id=by.id, passed=failed_item is None, notes=note,
                        results=results, created_at=lab.at(day, 8))
    lab.writer.add(check)
    lab.summary.checks += 1
    return check


def _checks(lab: _Lab) -> None:
    """Monthly checks for two years; one instrument overdue, one failure put right next day."""
    for d in INSTRUMENTS:
        days = []
        day = lab.weekday_on_or_before(lab.today - timedelta(days=d.last_check_days_ago))
        while day >= lab.start:
            days.append(day)
            # 27 days back, then back to a weekday: gaps of 25 to 29 days, inside the interval.
            day = lab.weekday_on_or_before(day - timedelta(days=27))
        failed_on = None
        if d.key == "open":
            failed_on = min(days, key=lambda x: abs((lab.today - x).days - 240))
        for day in reversed(days):
            checker = lab.people[SAFETY_OFFICER if lab.rng.random() < 0.4 else CHECKER[d.key]]
            if day == failed_on:
                _check(lab, d.key, day, checker, failed_item=FAILED_ITEM,
                       note="Port 2 indicator failed; instrument out of service until repaired.")
                fixed = day + timedelta(days=3 if day.weekday() == 4 else 1)
                _check(lab, d.key, fixed, lab.people[SAFETY_OFFICER],
                       note="Indicator lamp replaced; all items pass.")
                lab.blocked[d.key].update({day, fixed})
                lab.failed_on = day
            else:
                _check(lab, d.key, day, checker)


def _survey(lab: _Lab, key: str, day: date, meter: SurveyMeter, trigger: SurveyTrigger,
            by: Person) -> Survey:
    """A survey at the instrument's usual settings, every point well below the action level."""
    d = next(x for x in INSTRUMENTS if x.key == key)
    instrument = lab.instruments[key]
    enclosed = instrument.enclosure is Enclosure.ENCLOSED
    level = (instrument.surface_action_level_usv_h if enclosed
             else instrument.housing_action_level_usv_h)
    point_level = PointLevel.SURFACE if enclosed else PointLevel.HOUSING
    kv, ma = max(d.settings)
    points = []
    for where in ENCLOSED_POINTS if enclosed else OPEN_BEAM_POINTS:
        background = round(float(lab.rng.uniform(0.08, 0.14)), 2)
        reading = round(background + float(lab.rng.uniform(0.0, 0.3 if enclosed else 1.5)), 2)
        net = round(max(reading - background, 0.0) * meter.correction_factor, 3)
        points.append(SurveyPoint(location=where, distance_cm=5.0, reading_usv_h=reading,
                                  background_usv_h=background, net_usv_h=net,
                                  level=point_level, action_level_usv_h=level))
    survey = Survey(instrument_id=instrument.id, performed_at=lab.at(day, 15), trigger=trigger,
                    performed_by_id=by.id, kv=kv, ma=ma, meter_id=meter.id,
                    action_level_usv_h=level, max_net_usv_h=max(p.net_usv_h for p in points),
                    passed=True, points=points, created_at=lab.at(day, 16))
    lab.writer.add(survey)
    lab.summary.surveys += 1
    return survey


def _surveys_and_permit(lab: _Lab, meters: dict[str, SurveyMeter]) -> None:
    """Yearly surveys with the meter in calibration at the time; one closed bypass permit."""
    officer = lab.people[SAFETY_OFFICER]
    for i, d in enumerate(INSTRUMENTS):
        first = lab.weekday_on_or_before(lab.today - timedelta(days=720 - 5 * i))
        second = lab.weekday_on_or_before(lab.today - timedelta(days=355 - 5 * i))
        _survey(lab, d.key, first, meters["old"], SurveyTrigger.PERIODIC, officer)
        _survey(lab, d.key, second, meters["lapsed"], SurveyTrigger.PERIODIC, officer)

    day = lab.weekday_on_or_before(lab.today - timedelta(days=400))
    pxrd, requester = lab.instruments["pxrd"], lab.people["jfeld"]
    permit = BypassPermit(
        instrument_id=pxrd.id, devices="Enclosure door interlock (service key)",
        reason="Service engineer's goniometer and tube alignment with the door open.",
        requested_by_id=requester.id, requested_at=lab.at(day - timedelta(days=7), 10),
        window_start=lab.at(day, 10), window_end=lab.at(day, 12),
        ring_dosimetry_confirmed=True, status=PermitStatus.CLOSED, decided_by_id=officer.id,
        decided_at=lab.at(day - timedelta(days=6), 9),
        decision_note="Approved for two hours; engineer wears a ring dosimeter; room locked.",
        closed_by_id=officer.id, closed_at=lab.at(day, 12, 20))
    lab.session.add(permit)
    lab.session.flush()
    survey = _survey(lab, "pxrd", day, meters["lapsed"], SurveyTrigger.AFTER_BYPASS, officer)
    lab.writer.flush()
    lab.session.add(SurveyTask(
        instrument_id=pxrd.id, trigger=SurveyTrigger.AFTER_BYPASS, reason="Bypass permit closed.",
        raised_at=lab.at(day, 12, 20), bypass_permit_id=permit.id, survey_id=survey.id,
        done_at=lab.at(day, 15)))
    lab.blocked["pxrd"].add(day)


def _operators(lab: _Lab, key: str) -> list[DemoPerson]:
    """The people authorised on an instrument."""
    return [p for p in PEOPLE if key in p.authorisations]


def _sessions(lab: _Lab) -> None:
    """Weekday sessions for two years, back to back at most, none after today begins."""
    quarter_start = date(lab.today.year, 3 * ((lab.today.month - 1) // 3) + 1, 1)
    out_key, out_days, _ = OUT_OF_SERVICE
    for d in INSTRUMENTS:
        instrument = lab.instruments[d.key]
        users = _operators(lab, d.key)
        last_day = lab.today - timedelta(days=out_days + 1 if d.key == out_key else 1)
        day = lab.start
        while day <= last_day:
            if day.weekday() < 5 and day not in lab.blocked[d.key] and lab.rng.random() < d.busy:
                _day_of_sessions(lab, d, instrument, users, day, day >= quarter_start)
            day += timedelta(days=1)


def _day_of_sessions(lab: _Lab, d: DemoInstrument, instrument: Instrument,
                     users: list[DemoPerson], day: date, this_quarter: bool) -> None:
    """One or two sessions in a working day, the second after the first has ended."""
    here = [p for p in users if lab.joined(p) <= day]
    if not here:
        return
    if d.key == "open" and this_quarter:
        # The quarter's alignment work on the open-beam set-up was Lena Brandt's.
        here = [p for p in here if p.login == HIGH_DOSE_PERSON] or here
    minute = 8 * 60 + int(lab.rng.integers(0, 120))
    for _ in range(int(lab.rng.integers(1, 3))):
        hours = float(lab.rng.uniform(1, 8))
        length = min(int(hours * 60), 19 * 60 - minute)
        if length < 60:
            break
        person = here[int(lab.rng.integers(0, len(here)))]
        alignment = bool(d.alignment_settings) and lab.rng.random() < (0.6 if this_quarter else 0.2)
        kv, ma = (d.alignment_settings if alignment else d.settings)[
            int(lab.rng.integers(0, len(d.alignment_settings if alignment else d.settings)))]
        badge = lab.badges.get((person.login, DosimeterKind.WHOLE_BODY.value))
        worn = badge is not None and lab.rng.random() < 0.95
        # Rings go on for alignment work, where the hands come near the beam.
        rings = [lab.badges[(person.login, hand.value)] for hand in (Hand.LEFT, Hand.RIGHT)
                 if alignment and (person.login, hand.value) in lab.badges]
        # A supervised operator's session names a colleague authorised on their own.
        supervisor = next((lab.people[p.login] for p in here
                           if p is not person and p.authorisations[d.key] == I), None
                          ) if person.authorisations[d.key] == S else None
        start = lab.at(day, minute // 60, minute % 60)
        end = start + timedelta(minutes=length)
        changed = alignment and lab.rng.random() < 0.5
        lab.writer.add(InstrumentSession(
            instrument_id=instrument.id, operator_id=lab.people[person.login].id,
            started_at=start, ended_at=end, kv=float(kv), ma=float(ma),
            beam_on_minutes=float(round(length * float(lab.rng.uniform(0.5, 0.95)))),
            purpose="Beam alignment after changing the collimator" if alignment
            else d.purposes[int(lab.rng.integers(0, len(d.purposes)))],
            configuration_changed=changed,
            configuration_change="Collimator changed from 0.5 mm to 0.3 mm pinhole"
            if changed else None,
            alignment=alignment, pre_use_checks_confirmed=True, dosimeter_worn=worn,
            dosimeters=[badge, *rings] if worn else [],
            supervisor_id=supervisor.id if supervisor else None, created_at=end))
        lab.summary.sessions += 1
        minute += length + int(lab.rng.integers(15, 60))


def _months(first: date, today: date) -> list[tuple[date, date]]:
    """Calendar months (first day, last day) from `first`'s month, ended before today."""
    months, start = [], first.replace(day=1)
    while True:
        end = add_months(start, 1) - timedelta(days=1)
        if end >= today:
            return months
        months.append((start, end))
        start = add_months(start, 1)


def _record(lab: _Lab, login: str, where: str, start: date, end: date, quantity: Quantity,
            location: Location, value: float | None, mrd: float, unused: bool = False,
            **extra) -> DoseRecord:
    """A monthly result from the dosimetry report: measured, below the MRD or unused."""
    if unused:
        result, value = Result.UNUSED, None
    elif value is None or value < mrd:
        result, value = Result.BELOW_MRD, None
    else:
        result, value = Result.MEASURED, round(value, 2)
    record = DoseRecord(person_id=lab.people[login].id, dosimeter_id=lab.badges[(login, where)].id,
                        wear_start=start, wear_end=end, quantity=quantity, location=location,
                        value_msv=value, result=result, mrd_msv=mrd,
                        source=DoseSource.DOSIMETRY_REPORT, **extra)
    lab.writer.add(record)
    lab.summary.dose_records += 1
    return record


def _quarter_share(lab: _Lab, months: list[tuple[date, date]]) -> list[tuple[date, date]]:
    """Wear periods of the current quarter: its reported months, else an early read to today."""
    quarter_start = date(lab.today.year, 3 * ((lab.today.month - 1) // 3) + 1, 1)
    periods = [m for m in months if m[0] >= quarter_start]
    if not periods:
        # Nothing reported yet this quarter: the dosimeters went for an early read-out.
        periods = [(quarter_start, max(quarter_start, lab.today - timedelta(days=1)))]
    return periods


def _doses(lab: _Lab) -> None:
    """Monthly whole-body results for every badge wearer and ring results for open-beam users."""
    rng = lab.rng
    for p in PEOPLE:
        if not p.badge:
            continue
        months = _months(max(lab.joined(p), lab.start), lab.today)
        if months and lab.joined(p) > months[0][0]:
            months[0] = (lab.joined(p), months[0][1])
        high = p.login == HIGH_DOSE_PERSON
        special = _quarter_share(lab, months) if high else []
        regular = [m for m in months if m not in special]
        rate = 0.3 if p.rings else 0.12
        for start, end in regular:
            unused = start.month == 8 and rng.random() < 0.4
            hp10 = float(rng.uniform(0.1, 0.3)) if rng.random() < rate else None
            if (p.login, start) == _corrected_month(lab):
                unused, hp10 = False, CORRECTED[2]
            hp007 = hp10 * float(rng.uniform(1.1, 1.5)) if hp10 else None
            _record(lab, p.login, "whole_body", start, end, Quantity.HP10, Location.WHOLE_BODY,
                    hp10, MRD_BODY_MSV, unused)
            _record(lab, p.login, "whole_body", start, end, Quantity.HP007, Location.WHOLE_BODY,
                    hp007, MRD_BODY_MSV, unused)
            if p.rings:
                for hand, location, top in (("left", Location.LEFT_HAND, 0.8),
                                            ("right", Location.RIGHT_HAND, 1.5)):
                    value = float(rng.uniform(0.3, top)) if rng.random() < 0.35 else None
                    _record(lab, p.login, hand, start, end, Quantity.HP007, location, value,
                            MRD_RING_MSV, unused)
        if special:
            _high_quarter(lab, p.login, special)
    _correction(lab)


def _high_quarter(lab: _Lab, login: str, periods: list[tuple[date, date]]) -> None:
    """The quarter's results of the person above the investigation level, rising month by month."""
    weights = np.arange(1, len(periods) + 1, dtype=float)
    weights /= weights.sum()
    for (start, end), share in zip(periods, weights):
        hp10 = HIGH_QUARTER_HP10_MSV * share
        for quantity, value in ((Quantity.HP10, hp10), (Quantity.HP007, hp10 * 1.3)):
            _record(lab, login, "whole_body", start, end, quantity, Location.WHOLE_BODY, value,
                    MRD_BODY_MSV)
        _record(lab, login, "left", start, end, Quantity.HP007, Location.LEFT_HAND,
                HIGH_QUARTER_RING_LEFT_MSV * share, MRD_RING_MSV)
        _record(lab, login, "right", start, end, Quantity.HP007, Location.RIGHT_HAND,
                HIGH_QUARTER_RING_RIGHT_MSV * share, MRD_RING_MSV)


def _corrected_month(lab: _Lab) -> tuple[str, date]:
    """The person and the wear-period start of the result that was corrected."""
    return CORRECTED[0], add_months(lab.today.replace(day=1), -CORRECTED[1])


def _correction(lab: _Lab) -> None:
    """One result corrected by the dosimetry service: version 2 supersedes version 1."""
    login, start = _corrected_month(lab)
    end = add_months(start, 1) - timedelta(days=1)
    lab.writer.flush()
    original = lab.session.scalar(sa.select(DoseRecord).where(
        DoseRecord.person_id == lab.people[login].id, DoseRecord.wear_start == start,
        DoseRecord.quantity == Quantity.HP10, DoseRecord.location == Location.WHOLE_BODY))
    _record(lab, login, "whole_body", start, end, Quantity.HP10, Location.WHOLE_BODY,
            CORRECTED[3], MRD_BODY_MSV, supersedes_id=original.id, version=2,
            reason="Amended report from the dosimetry service: the first read-out used the "
                   "wrong calibration batch.")


def _pregnancy(lab: _Lab) -> None:
    """A declaration two months ago, with an abdomen dosimeter from that day."""
    person = lab.people[PREGNANT_PERSON]
    declared = lab.today - timedelta(days=60)
    lab.session.add(PregnancyDeclaration(
        person_id=person.id, declared_on=declared, recorded_by_id=lab.people[SAFETY_OFFICER].id,
        created_at=lab.at(declared, 11)))
    abdomen = Dosimeter(serial="OST-1901", kind=DosimeterKind.ABDOMEN, wearer_id=person.id,
                        issued_on=declared)
    lab.session.add(abdomen)
    lab.session.flush()
    lab.badges[(PREGNANT_PERSON, "abdomen")] = abdomen
    months = _months(declared, lab.today)
    months[0] = (declared, months[0][1])
    for start, end in months:
        _record(lab, PREGNANT_PERSON, "abdomen", start, end, Quantity.HP10, Location.ABDOMEN,
                None, MRD_BODY_MSV)


def _incidents(lab: _Lab) -> None:
    """An open near miss on the open-beam set-up and the closed lamp failure of the failed check."""
    officer, brandt = lab.people[SAFETY_OFFICER], lab.people[HIGH_DOSE_PERSON]
    open_beam = lab.instruments["open"]
    when = lab.at(lab.weekday_on_or_before(lab.today - timedelta(days=10)), 14, 20)
    near_miss = Incident(
        occurred_at=when, instrument_id=open_beam.id, type=IncidentType.NEAR_MISS,
        description="While re-aligning the sample stage, a hand came within a few centimetres "
                    "of the primary beam path before shutter 1 was closed; the beam-path guard "
                    "had been lifted to reach the stage screws.",
        immediate_actions="Shutter closed, guard refitted, work stopped. Radiation safety "
                          "officer told the same afternoon; dosimeters sent for read-out.",
        reported_by_id=brandt.id, reported_at=when + timedelta(hours=1), people=[brandt])
    failed = lab.failed_on
    fault = Incident(
        occurred_at=lab.at(failed, 7, 40), instrument_id=open_beam.id,
        type=IncidentType.WARNING_LIGHT_FAILURE,
        description="Shutter-open indicator at port 2 did not light during the monthly check.",
        immediate_actions="Instrument taken out of service; no work on port 2.",
        reported_by_id=officer.id, reported_at=lab.at(failed, 8),
        closed_at=lab.at(failed + timedelta(days=1), 12), closed_by_id=officer.id,
        closing_note="Lamp replaced; the check the next working day passed on every item.")
    lab.session.add_all([near_miss, fault])
    lab.session.flush()
    lab.session.add(IncidentNote(incident_id=fault.id, author_id=officer.id,
                                 written_at=lab.at(failed, 9),
                                 text="Spare lamp ordered; port 2 blanked off meanwhile."))


def _out_of_service(lab: _Lab, meter: SurveyMeter) -> None:
    """The small-angle camera waits for its survey after a tube change; the first one failed."""
    key, days, reason = OUT_OF_SERVICE
    instrument = lab.instruments[key]
    set_out_of_service(lab.session, instrument, reason)
    since = lab.at(lab.today - timedelta(days=days), 10)
    instrument.out_of_service_since = since
    lab.session.add(SurveyTask(instrument_id=instrument.id, trigger=SurveyTrigger.AFTER_MAINTENANCE,
                               reason="X-ray tube replaced.", raised_at=since))
    _failed_survey(lab, instrument, meter, lab.weekday_on_or_before(lab.today - timedelta(days=days - 1)))


# The one failed survey point: the shield plate over the new tube was not yet refitted.
FAILED_POINT = ("Tube housing, top of enclosure", 6.4, 0.1)


def _failed_survey(lab: _Lab, instrument: Instrument, meter: SurveyMeter, day: date) -> None:
    """The survey after the tube change, failed at one point; the survey task stays open."""
    level = instrument.surface_action_level_usv_h
    points = []
    for where in ENCLOSED_POINTS:
        reading, background = (FAILED_POINT[1:] if where == FAILED_POINT[0]
                               else (round(float(lab.rng.uniform(0.12, 0.3)), 2), 0.1))
        points.append(SurveyPoint(location=where, distance_cm=5.0, reading_usv_h=reading,
                                  background_usv_h=background,
                                  net_usv_h=round((reading - background) * meter.correction_factor, 3),
                                  level=PointLevel.SURFACE, action_level_usv_h=level))
    lab.writer.add(Survey(
        instrument_id=instrument.id, performed_at=lab.at(day, 14), trigger=SurveyTrigger.AFTER_MAINTENANCE,
        performed_by_id=lab.people[SAFETY_OFFICER].id, kv=50.0, ma=0.6, meter_id=meter.id,
        action_level_usv_h=level, max_net_usv_h=max(p.net_usv_h for p in points), passed=False,
        points=points, created_at=lab.at(day, 15),
        notes="Shield plate above the new tube housing not yet refitted; survey again once it is."))
    lab.summary.surveys += 1
