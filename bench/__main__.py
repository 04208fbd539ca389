"""`python -m bench`: build the synthetic lab, time each part, print the figures and their ratios."""
from __future__ import annotations

import argparse
import os
import time
from datetime import UTC, datetime

import sqlalchemy as sa

from bench import sessions_list, synthetic, timing
from models.people.tables import Person

OUT = os.path.join(os.path.dirname(__file__), "out")
HOME_TARGET_S = 0.150
ENGINE_READ_TARGET = 0.1


def main(argv=None) -> None:
    """Parse the sizes, run every timing, print the table."""
    parser = argparse.ArgumentParser(prog="python -m bench", description=__doc__)
    parser.add_argument("--people", type=int, default=1000)
    parser.add_argument("--years", type=int, default=10)
    parser.add_argument("--runs", type=int, default=7, help="runs per median (engine, home page)")
    parser.add_argument("--sessions", type=int, default=1_000_000, help="sessions in the log")
    parser.add_argument("--path", default=os.path.join(OUT, "bench.sqlite"))
    args = parser.parse_args(argv)
    os.makedirs(os.path.dirname(os.path.abspath(args.path)), exist_ok=True)
    for line in run(args.path, args.people, args.years, args.runs, args.sessions):
        print(line, flush=True)


def run(path: str, people: int, years: int, runs: int, sessions: int = 1_000_000):
    """Yield the report's lines as the figures come in."""
    from webapp.extensions import db

    on = datetime.now(UTC).date()
    started = time.perf_counter()
    app, lab = synthetic.build(path, people, years, on)
    built = time.perf_counter() - started
    if lab.n_records != lab.expected_records():
        raise RuntimeError(f"{lab.n_records} records generated, {lab.expected_records()} expected")
    yield (f"Synthetic lab: {lab.n_people:,} people x {lab.n_months} months; "
           f"{lab.ring_wearers:,} ring wearers, {lab.lens_wearers:,} lens wearers")
    yield (f"Dose records in force: {lab.n_records:,} = {lab.n_months} x (2 x {lab.n_people:,} "
           f"whole body + 2 x {lab.ring_wearers:,} rings + {lab.lens_wearers:,} lens); "
           f"{int(lab.estimated.sum()):,} of them are estimates that replaced a lost result")
    yield f"Built and inserted in {built:.1f} s into {path}; evaluation date {on}"
    yield ""
    with app.app_context():
        started = time.perf_counter()
        person_ids = list(db.session.scalars(sa.select(Person.id)))
        with db.engine.begin() as connection:
            sessions_list.insert_sessions(connection, sessions, person_ids, on)
        yield f"{sessions:,} sessions on {sessions_list.N_INSTRUMENTS} instruments inserted in {time.perf_counter() - started:.1f} s"
        yield ""
    with app.app_context():
        read_s, records = timing.time_read(db.session, max(3, runs // 2))
        engine_s = timing.time_engine(db.session, records, on, runs)
        loop_s = timing.time_loop(db.session, on, max(1, runs // 3))
    with app.app_context(), app.test_client() as client:
        cold_s, warm_s, lines = timing.time_home(client, synthetic.OFFICER_LOGIN,
                                                 synthetic.OFFICER_PASSWORD, 3 * runs)
        first_page_s, deep_page_s = sessions_list.time_pages(client, runs)
    rows = [
        ("(a) engine alone: compute_doses + evaluate, everyone", engine_s),
        ("(b) read: one SQL query into the engine's arrays", read_s),
        ("(c) plain Python loop over the rows (fixed periods only)", loop_s),
        ("(d) safety officer's home page, first request (cold)", cold_s),
        ("(d) safety officer's home page, warm (median)", warm_s),
        (f"(e) sessions list, newest page of {sessions:,}", first_page_s),
        ("(e) sessions list, 11th page (keyset)", deep_page_s),
    ]
    width = max(len(label) for label, _ in rows)
    yield f"{'what':<{width}}  {'ms':>9}"
    for label, seconds in rows:
        yield f"{label:<{width}}  {1000 * seconds:9.1f}"
    yield ""
    ratio = engine_s / read_s
    yield (f"engine / read = {ratio:.3f} (target <= {ENGINE_READ_TARGET}: "
           f"{'met' if ratio <= ENGINE_READ_TARGET else 'NOT met'})")
    yield f"loop / engine = {loop_s / engine_s:.0f}x"
    yield (f"home page warm = {1000 * warm_s:.1f} ms (target < {1000 * HOME_TARGET_S:.0f} ms: "
           f"{'met' if warm_s < HOME_TARGET_S else 'NOT met'}); cold = {1000 * cold_s:.0f} ms "
           f"(reads and evaluates once, then cached); {lines} attention lines")
    slowest = max(first_page_s, deep_page_s)
    yield (f"sessions list = {1000 * slowest:.1f} ms at {sessions:,} sessions (target < "
           f"{1000 * sessions_list.PAGE_TARGET_S:.0f} ms: {'met' if slowest < sessions_list.PAGE_TARGET_S else 'NOT met'})")


if __name__ == "__main__":
    main()
