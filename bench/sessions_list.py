"""A large session log for the bench: instruments and sessions written with executemany, then the
sessions list timed page by page as the safety officer sees it."""
from __future__ import annotations

import re
from datetime import UTC, datetime, timedelta

import numpy as np
import sqlalchemy as sa

from bench.timing import median_seconds
from models.instruments.tables import Enclosure, Instrument, InstrumentKind
from models.sessions.tables import InstrumentSession

N_INSTRUMENTS = 20
CHUNK = 50_000
PAGE_TARGET_S = 0.100


def insert_sessions(connection: sa.Connection, n_sessions: int, person_ids: list[int], on, seed: int = 7) -> None:
    """`n_sessions` ended sessions over 20 instruments, back in time from `on`, one every few minutes."""
    rng = np.random.default_rng(seed)
    ids = [connection.execute(sa.insert(Instrument).values(
        name=f"Bench instrument {n:02d}", kind=InstrumentKind.POWDER_XRD, anode="Cu", max_kv=60, max_ma=60,
        max_power_w=3000, enclosure=Enclosure.ENCLOSED)).inserted_primary_key[0] for n in range(N_INSTRUMENTS)]
    end = datetime.combine(on, datetime.min.time(), tzinfo=UTC)
    for first in range(0, n_sessions, CHUNK):
        n = min(CHUNK, n_sessions - first)
        minutes = (first + np.arange(n)) * 7 // N_INSTRUMENTS
        rows = [{"instrument_id": ids[int(i)], "operator_id": person_ids[int(p)],
                 "started_at": end - timedelta(minutes=int(m) + 60), "ended_at": end - timedelta(minutes=int(m)),
                 "kv": 40.0, "ma": 40.0, "beam_on_minutes": 50.0, "purpose": "bench",
                 "pre_use_checks_confirmed": True, "dosimeter_worn": True}
                for i, p, m in zip(rng.integers(0, N_INSTRUMENTS, n), rng.integers(0, len(person_ids), n), minutes,
                                   strict=True)]
        connection.execute(sa.insert(InstrumentSession), rows)


def time_pages(client, runs: int, depth: int = 10) -> tuple[float, float]:
    """Median seconds of the first page and of the page `depth` pages in, following 'Older' links."""
    first_s, page = median_seconds(lambda: client.get("/sessions/"), runs)
    url = "/sessions/"
    for _ in range(depth):
        found = re.search(r'href="(/sessions/\?before=[^"]+)">Older', client.get(url).get_data(as_text=True))
        if not found:
            raise RuntimeError("the sessions list has fewer pages than the bench asks for")
        url = found.group(1).replace("&amp;", "&")
    deep_s, page = median_seconds(lambda: client.get(url), runs)
    if page.status_code != 200:
        raise RuntimeError(f"sessions page answered {page.status_code}")
    return first_s, deep_s
