"""`python -m bench.loggers`: concurrent instrument PCs against the production server.

Starts gunicorn over a fresh database, lets each logger (one API token each, four loggers per
instrument) race the others of its instrument for the same slots for a fixed time, then checks the
database: every session acknowledged with 201 must be there, and no two sessions of one instrument
may share time. Prints requests, refusals by reason, 5xx, acknowledged-but-missing, double bookings
and the p50 / p99 latency.
"""
from __future__ import annotations

import argparse
import http.client
import json
import statistics
import tempfile
import threading
import time
import uuid
from collections import Counter
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta

import sqlalchemy as sa

from bench.server import SECRET_KEY, fresh_database, gunicorn

LOGGERS_PER_INSTRUMENT = 4
SLOT = timedelta(minutes=15)
SESSION_LENGTH = timedelta(minutes=10)
DAYS_BACK = 60
# Sixty days of 15-minute slots, less a margin: a logger stops when its instrument runs out.
MAX_SLOTS = DAYS_BACK * 96 - 200
REQUEST_TIMEOUT_S = 30
FOREVER = datetime.max.replace(tzinfo=UTC)
QUICK = {"seconds": 3.0, "loggers": 8, "workers": 2}


@dataclass
class Tally:
    """What the loggers saw, merged under one lock."""

    requests: int = 0
    ok: int = 0
    replays: int = 0
    replay_mismatches: int = 0
    server_errors: int = 0
    no_answer: int = 0
    refusals: Counter = field(default_factory=Counter)
    latencies_s: list[float] = field(default_factory=list)
    acknowledged: dict[int, int] = field(default_factory=dict)  # session id -> instrument id
    lock: threading.Lock = field(default_factory=threading.Lock)


@dataclass(frozen=True)
class Result:
    """The figures the bench prints."""

    database: str
    seconds: float
    loggers: int
    workers: int
    tally: Tally
    missing: int
    double_bookings: int

    @property
    def p50_ms(self) -> float:
        """Median latency in ms."""
        return 1000 * statistics.median(self.tally.latencies_s) if self.tally.latencies_s else float("nan")

    @property
    def p99_ms(self) -> float:
        """99th percentile latency in ms."""
        values = self.tally.latencies_s
        return 1000 * statistics.quantiles(values, n=100)[98] if len(values) > 1 else float("nan")


@dataclass(frozen=True)
class Pc:
    """One logger: its token, its operator and the instrument it shares with others."""

    token: str
    operator: str
    instrument_id: int


def prepare(database_url: str, loggers: int, today: datetime) -> list[Pc]:
    """Instruments, authorised operators and one token per logger, committed."""
    from models.core.codes import WorkerCategory
    from models.instruments.instrument_ops import save_instrument
    from models.instruments.tables import Authorisation, AuthorisationLevel, Enclosure, InstrumentKind
    from models.instruments.token_ops import create_token
    from models.people.person_ops import add_person
    from models.people.tables import Role
    from webapp import create_app
    from webapp.extensions import db

    app = create_app({"SQLALCHEMY_DATABASE_URI": database_url, "SECRET_KEY": SECRET_KEY})
    pcs = []
    with app.app_context():
        instruments = []
        for n in range((loggers + LOGGERS_PER_INSTRUMENT - 1) // LOGGERS_PER_INSTRUMENT):
            instruments.append(save_instrument(db.session, {
                "name": f"Bench P{n + 1}", "kind": InstrumentKind.POWDER_XRD, "room": "B1",
                "registration_number": f"BENCH-{n + 1}", "anode": "Cu", "max_kv": 60.0, "max_ma": 60.0,
                "max_power_w": 2200.0, "enclosure": Enclosure.ENCLOSED, "check_interval_days": 30,
                "survey_interval_days": 365, "surface_action_level_usv_h": 2.5,
                "housing_action_level_usv_h": 25.0}))
        for n in range(loggers):
            instrument = instruments[n // LOGGERS_PER_INSTRUMENT]
            person = add_person(db.session, login=f"pc{n + 1}", name=f"Bench operator {n + 1}",
                                email=f"pc{n + 1}@example.org", roles={Role.OPERATOR},
                                category=WorkerCategory.ADULT_WORKER, password_hash="!")
            db.session.add(Authorisation(
                person_id=person.id, instrument_id=instrument.id, level=AuthorisationLevel.INDEPENDENT,
                trained_on=(today - timedelta(days=DAYS_BACK + 30)).date(),
                refresher_due=(today + timedelta(days=300)).date()))
            _row, token = create_token(db.session, instrument)
            pcs.append(Pc(token=token, operator=person.login, instrument_id=instrument.id))
        db.session.commit()
        db.engine.dispose()
    return pcs


class Slots:
    """The slot each instrument's loggers are racing for; it moves on once someone has it."""

    def __init__(self):
        self._lock, self._next = threading.Lock(), Counter()

    def current(self, instrument_id: int) -> int:
        """The slot to try now."""
        with self._lock:
            return self._next[instrument_id]

    def taken(self, instrument_id: int, slot: int) -> None:
        """The slot has its session: move on past it."""
        with self._lock:
            self._next[instrument_id] = max(self._next[instrument_id], slot + 1)


def _call(conn: http.client.HTTPConnection, method: str, path: str, token: str,
          body: dict | None = None, key: str | None = None) -> tuple[int, dict | None, float]:
    """One request: status, JSON answer and seconds taken; (0, None, t) when nothing came back."""
    headers = {"Authorization": f"Bearer {token}", "Content-Type": "application/json"}
    if key:
        headers["Idempotency-Key"] = key
    started = time.perf_counter()
    try:
        conn.request(method, path, body=json.dumps(body) if body is not None else None, headers=headers)
        response = conn.getresponse()
        data = response.read()
    except (OSError, http.client.HTTPException):
        conn.close()
        return 0, None, time.perf_counter() - started
    elapsed = time.perf_counter() - started
    try:
        answer = json.loads(data) if data else None
    except ValueError:
        answer = None
    return response.status, answer, elapsed


def _reason(status: int, answer: dict | None) -> str:
    """A refusal's reason as the bench counts it."""
    if status == 429:
        return "rate limited (429)"
    errors = (answer or {}).get("errors") or {}
    if "cannot overlap" in errors.get("started_at", ""):
        return "overlap (422)"
    return f"{status} " + ",".join(sorted(errors)) if errors else str(status)


def _record(tally: Tally, status: int, answer: dict | None, elapsed: float, pc: Pc,
            acknowledges: bool) -> None:
    """Count one answer."""
    with tally.lock:
        tally.requests += 1
        tally.latencies_s.append(elapsed)
        if status == 0:
            tally.no_answer += 1
        elif status >= 500:
            tally.server_errors += 1
        elif status < 300:
            tally.ok += 1
            if acknowledges and status == 201 and answer:
                tally.acknowledged[answer["id"]] = pc.instrument_id
        else:
            tally.refusals[_reason(status, answer)] += 1


def _finished_body(pc: Pc, base: datetime, slot: int) -> dict:
    """A written-up session in the given slot."""
    start = base + slot * SLOT
    return {"operator": pc.operator, "kv": 40, "ma": 30, "purpose": "bench",
            "pre_use_checks_confirmed": True, "started_at": start.isoformat(),
            "ended_at": (start + SESSION_LENGTH).isoformat()}


def run_logger(host: str, port: int, pc: Pc, slots: Slots, base: datetime, deadline: float,
               tally: Tally) -> None:
    """Log sessions until the deadline: mostly slot races, some retries, open/close and listing."""
    conn = http.client.HTTPConnection(host, port, timeout=REQUEST_TIMEOUT_S)
    last: tuple[str, dict, int] | None = None  # key, body and id of the last session logged
    i = 0
    while time.monotonic() < deadline:
        i += 1
        if i % 10 == 9:
            status, answer, elapsed = _call(conn, "GET", "/api/v1/sessions?limit=20", pc.token)
            _record(tally, status, answer, elapsed, pc, False)
        elif i % 10 == 4 and last is not None:
            # A PC that lost the answer retries with the same key: it must get the same session.
            key, body, first_id = last
            status, answer, elapsed = _call(conn, "POST", "/api/v1/sessions/finished", pc.token, body, key)
            _record(tally, status, answer, elapsed, pc, True)
            with tally.lock:
                tally.replays += status == 201
                tally.replay_mismatches += status == 201 and answer["id"] != first_id
        elif i % 10 == 7:
            status, answer, elapsed = _call(conn, "POST", "/api/v1/sessions", pc.token,
                                            {k: v for k, v in _finished_body(pc, base, 0).items()
                                             if k not in ("started_at", "ended_at")}, str(uuid.uuid4()))
            _record(tally, status, answer, elapsed, pc, True)
            if status == 201:
                status, answer, elapsed = _call(conn, "POST", f"/api/v1/sessions/{answer['id']}/close",
                                                pc.token, {}, str(uuid.uuid4()))
                _record(tally, status, answer, elapsed, pc, False)
        else:
            slot = slots.current(pc.instrument_id)
            if slot >= MAX_SLOTS:
                return
            # Half the posts carry no Idempotency-Key, as a PC that never retries might send them;
            # only the session write lock / exclusion constraint then stands between them.
            key, body = (str(uuid.uuid4()) if i % 2 else None), _finished_body(pc, base, slot)
            status, answer, elapsed = _call(conn, "POST", "/api/v1/sessions/finished", pc.token, body, key)
            _record(tally, status, answer, elapsed, pc, True)
            if status == 201 and key:
                last = (key, body, answer["id"])
            if status == 201 or _reason(status, answer) == "overlap (422)":
                slots.taken(pc.instrument_id, slot)
    conn.close()


def double_bookings(rows) -> int:
    """Sessions that start before an earlier one of their instrument ended (rows: instrument, start, end)."""
    count, reach = 0, {}
    for instrument_id, start, end in sorted(rows, key=lambda r: (r[0], r[1])):
        if instrument_id in reach and start < reach[instrument_id]:
            count += 1
        ends = FOREVER if end is None else end  # an open session has no end yet
        reach[instrument_id] = max(reach.get(instrument_id, ends), ends)
    return count


def check(database_url: str, tally: Tally) -> tuple[int, int]:
    """Acknowledged sessions missing from the database, and double bookings."""
    from models.sessions.tables import InstrumentSession

    engine = sa.create_engine(database_url)
    try:
        with engine.connect() as conn:
            table = InstrumentSession.__table__
            rows = conn.execute(sa.select(table.c.id, table.c.instrument_id, table.c.started_at,
                                          table.c.ended_at)).all()
    finally:
        engine.dispose()
    stored = {row.id: row.instrument_id for row in rows}
    missing = sum(1 for id_, instrument in tally.acknowledged.items() if stored.get(id_) != instrument)
    return missing, double_bookings([(r.instrument_id, r.started_at, r.ended_at) for r in rows])


def run(database: str, seconds: float, loggers: int, workers: int, port: int) -> Result:
    """Start the server over a fresh database, run the loggers, stop the server, check the database."""
    today = datetime.now(UTC).replace(hour=0, minute=0, second=0, microsecond=0)
    base = today - timedelta(days=DAYS_BACK)
    tally, slots = Tally(), Slots()
    with tempfile.TemporaryDirectory(prefix="bench-loggers-") as directory, \
            fresh_database(database, directory) as url:
        pcs = prepare(url, loggers, today)
        with gunicorn(url, port, workers=workers):
            deadline = time.monotonic() + seconds
            threads = [threading.Thread(target=run_logger, daemon=True,
                                        args=("127.0.0.1", port, pc, slots, base, deadline, tally))
                       for pc in pcs]
            for thread in threads:
                thread.start()
            for thread in threads:
                thread.join(seconds + 2 * REQUEST_TIMEOUT_S)
        missing, doubles = check(url, tally)
    return Result(database, seconds, loggers, workers, tally, missing, doubles)


def report(result: Result) -> list[str]:
    """The printed table."""
    t = result.tally
    lines = [f"{result.loggers} API loggers for {result.seconds:g} s, gunicorn with {result.workers} "
             f"workers, {result.database}",
             f"  requests                      {t.requests:>8,}",
             f"  answered 2xx                  {t.ok:>8,}  (idempotent replays {t.replays:,}, "
             f"with another id {t.replay_mismatches})",
             "  refusals by reason:"]
    lines += [f"    {reason:<28}{count:>8,}" for reason, count in t.refusals.most_common()] or ["    none"]
    lines += [f"  5xx                           {t.server_errors:>8,}",
              f"  no answer                     {t.no_answer:>8,}",
              f"  acknowledged but missing      {result.missing:>8,}  (of {len(t.acknowledged):,} acknowledged)",
              f"  double bookings               {result.double_bookings:>8,}",
              f"  latency p50 / p99             {result.p50_ms:.1f} / {result.p99_ms:.1f} ms"]
    return lines


def main(argv=None) -> None:
    """Parse the sizes, run, print."""
    parser = argparse.ArgumentParser(prog="python -m bench.loggers", description=__doc__,
                                     formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--database", choices=("sqlite", "postgresql"), default="sqlite")
    parser.add_argument("--seconds", type=float, default=20.0)
    parser.add_argument("--loggers", type=int, default=32)
    parser.add_argument("--workers", type=int, default=4, help="gunicorn workers")
    parser.add_argument("--port", type=int, default=5107)
    parser.add_argument("--quick", action="store_true", help="8 loggers for 3 s on 2 workers")
    args = parser.parse_args(argv)
    sizes = QUICK if args.quick else {"seconds": args.seconds, "loggers": args.loggers,
                                      "workers": args.workers}
    result = run(args.database, port=args.port, **sizes)
    print("\n".join(report(result)), flush=True)
    failed = result.tally.server_errors or result.missing or result.double_bookings
    raise SystemExit(1 if failed else 0)


if __name__ == "__main__":
    main()
