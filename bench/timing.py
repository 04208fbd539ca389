"""The bench's timings: the engine alone, the read floor, a plain Python loop, the home page."""
from __future__ import annotations

import statistics
import time
from datetime import date

import numpy as np
import sqlalchemy as sa

from models.core.codes import Result
from models.core.settings import lab_settings
from models.exposure import lab_ops
from models.exposure.engine import DoseRecords, compute_doses
from models.exposure.evaluation import evaluate
from models.exposure.lab_ops import read_records
from models.exposure.periods import fixed_windows
from models.exposure.rules_ops import rules_on
from models.people.tables import Person


def median_seconds(job, runs: int) -> tuple[float, object]:
    """Median wall time of `runs` calls of job(), and the last result."""
    times, result = [], None
    for _ in range(runs):
        started = time.perf_counter()
        result = job()
        times.append(time.perf_counter() - started)
    return statistics.median(times), result


def people_of(session) -> tuple[np.ndarray, np.ndarray]:
    """(P,) person ids in id order and their worker categories."""
    rows = session.execute(sa.select(Person.id, Person.category).order_by(Person.id)).all()
    return (np.array([r[0] for r in rows], dtype=np.int64),
            np.array([str(r[1]) for r in rows], dtype=str))


def time_read(session, runs: int) -> tuple[float, DoseRecords]:
    """(b) One plain SQL query of every record in force into the engine's arrays: the floor."""
    people, _ = people_of(session)
    session.expire_all()
    return median_seconds(lambda: read_records(session, people), runs)


def time_engine(session, records: DoseRecords, on: date, runs: int) -> float:
    """(a) compute_doses + evaluate for everyone on one date, arrays in and arrays out."""
    people, categories = people_of(session)
    limit_set, policies = rules_on(session, on)
    no_pregnancy = np.full(len(people), np.datetime64("NaT"), dtype="datetime64[D]")

    def run():
        totals = compute_doses(records, len(people), on, policies, no_pregnancy, no_pregnancy)
        return evaluate(totals, limit_set, categories)

    seconds, _ = median_seconds(run, runs)
    return seconds


def plain_loop(rows: list[tuple], on: date, first_block_year: int) -> dict:
    """(c) A naive per-record loop: prorated sums per person x quantity x location x period.

    The fixed periods (year, rolling 12 months, quarter, month, both five-year kinds), the default
    policies (prorate by days, below-MRD as zero); no lens substitution or worst hand.
    """
    windows = {kind: (start, min(end, on))
               for kind, (start, end) in fixed_windows(on, first_block_year).items()}
    sums: dict = {}
    for person_id, quantity, location, wear_start, wear_end, value, result, _mrd in rows:
        if wear_start > on or value is None or result != Result.MEASURED:
            continue
        wear_days = (wear_end - wear_start).days + 1
        for kind, (start, end) in windows.items():
            days = (min(wear_end, end) - max(wear_start, start)).days + 1
            if days > 0:
                key = (person_id, quantity, location, kind)
                sums[key] = sums.get(key, 0.0) + value * days / wear_days
    return sums


def time_loop(session, on: date, runs: int) -> float:
    """(c) The plain loop over rows already read (the read is timed by itself in (b))."""
    settings = lab_settings(session)
    # The same query as the read floor: the records in force, engine columns.
    rows = session.execute(lab_ops._record_columns()).all()
    seconds, _ = median_seconds(
        lambda: plain_loop(rows, on, settings.five_year_first_year), runs)
    return seconds


def time_home(client, login: str, password: str, runs: int) -> tuple[float, float, int]:
    """(d) The safety officer's home page: (cold seconds, warm median seconds, attention lines)."""
    response = client.post("/login", data={"login": login, "password": password})
    if response.status_code != 302:
        raise RuntimeError("the bench could not log in as the safety officer")
    cold, page = median_seconds(lambda: client.get("/"), 1)
    warm, page = median_seconds(lambda: client.get("/"), runs)
    if page.status_code != 200:
        raise RuntimeError(f"home page answered {page.status_code}")
    return cold, warm, page.get_data(as_text=True).count('<tr><td><span class="state')
