"""A synthetic lab for the bench: people with years of monthly dosimetry, in a fresh SQLite file.

Every person wears a whole-body dosimeter (Hp(10) and Hp(0.07) each month); a fixed share also
wear rings on both hands (Hp(0.07)) and a fixed share a lens dosimeter (Hp(3)). Half exchange on
the 1st of the month, half on the 15th, so wear periods straddle month, quarter and year ends.
A few busy people get enough dose to cross investigation levels; a few results are unused or
lost, and the safety officer has entered an estimate (a second version) for every lost badge
except those of the last two months. A fixed seed makes the records the same on every run
(dates are counted back from the month before the evaluation date).

Records go in with Core `insert` executemany: fast, and it bypasses the audit listener and the
stored evaluation's, which fire only for ORM flushes. The limit set put in force afterwards through
the ORM evaluates everyone and stores the figures, before the bench starts the app.
"""
from __future__ import annotations

import os
from dataclasses import dataclass
from datetime import UTC, date, datetime

import numpy as np
import sqlalchemy as sa
from dateutil.relativedelta import relativedelta

from models.doses.tables import DoseRecord
from models.people.tables import Person

RING_SHARE = 0.3
LENS_SHARE = 0.4
BUSY_SHARE = 0.03
SEED = 20_260_101
OFFICER_LOGIN = "rso"
OFFICER_PASSWORD = "bench password"
# Typical minimum reportable doses: 0.01 mSv photon, 0.3 mSv ring (REFERENCE.md, one US programme).
WHOLE_BODY_MRD_MSV = 0.01
RING_MRD_MSV = 0.3
# Lost badges whose wear period ended within this many days have no estimate yet.
ESTIMATE_AFTER_DAYS = 60


@dataclass(frozen=True)
class SyntheticLab:
    """What was generated: sizes and the columns of the records (person as 0..P-1)."""

    on: date
    n_people: int
    n_months: int
    ring_wearers: int
    lens_wearers: int
    columns: dict[str, np.ndarray]

    @property
    def n_records(self) -> int:
        """Exact count of records in force (estimates replace the lost results they amend)."""
        return len(self.columns["person"])

    @property
    def estimated(self) -> np.ndarray:
        """Mask of the lost results that have an estimate by now."""
        cutoff = np.datetime64(self.on) - np.timedelta64(ESTIMATE_AFTER_DAYS, "D")
        return (self.columns["result"] == "lost") & (self.columns["wear_end"] < cutoff)

    def expected_records(self) -> int:
        """months x (2 whole-body + 2 rings per ring wearer + 1 lens per lens wearer)."""
        return self.n_months * (2 * self.n_people + 2 * self.ring_wearers + self.lens_wearers)


def _wear_periods(n_months: int, on: date, offset_day: int) -> tuple[np.ndarray, np.ndarray]:
    """n_months consecutive monthly wear periods starting on `offset_day`, all ended before `on`."""
    last_start = (on - relativedelta(months=1)).replace(day=offset_day)
    if last_start + relativedelta(months=1) > on:
        last_start -= relativedelta(months=1)
    starts = [last_start - relativedelta(months=n_months - 1 - i) for i in range(n_months)]
    ends = [s + relativedelta(months=1, days=-1) for s in starts]
    return np.array(starts, dtype="datetime64[D]"), np.array(ends, dtype="datetime64[D]")


def generate(n_people: int, years: int, on: date, seed: int = SEED) -> SyntheticLab:
    """People x months of records, as columns, with values drawn from a fixed seed."""
    rng = np.random.default_rng(seed)
    n_months = 12 * years
    order = rng.permutation(n_people)
    ring_wearers = order[: round(RING_SHARE * n_people)]
    lens_wearers = order[-round(LENS_SHARE * n_people):]
    # Monthly Hp(10) rate per person: mostly near background, a few busy people much higher.
    rate = rng.lognormal(np.log(0.02), 0.8, n_people)
    busy = rng.choice(n_people, max(1, round(BUSY_SHARE * n_people)), replace=False)
    rate[busy] = rng.lognormal(np.log(0.5), 0.5, len(busy))
    periods = [_wear_periods(n_months, on, day) for day in (1, 15)]

    parts = []
    for quantity, location, wearers, factor, mrd in (
        ("Hp(10)", "whole_body", np.arange(n_people), 1.0, WHOLE_BODY_MRD_MSV),
        ("Hp(0.07)", "whole_body", np.arange(n_people), 1.1, WHOLE_BODY_MRD_MSV),
        ("Hp(0.07)", "left_hand", ring_wearers, 4.0, RING_MRD_MSV),
        ("Hp(0.07)", "right_hand", ring_wearers, 6.0, RING_MRD_MSV),
        ("Hp(3)", "eye", lens_wearers, 1.05, WHOLE_BODY_MRD_MSV),
    ):
        person = np.repeat(np.sort(wearers), n_months)
        month = np.tile(np.arange(n_months), len(wearers))
        starts = np.where(person % 2 == 0, periods[0][0][month], periods[1][0][month])
        ends = np.where(person % 2 == 0, periods[0][1][month], periods[1][1][month])
        value = rate[person] * factor * rng.lognormal(0.0, 0.6, len(person))
        draw = rng.random(len(person))
        result = np.where(value < mrd, "below_mrd", "measured").astype(object)
        result[draw < 0.01] = "unused"
        result[(draw >= 0.01) & (draw < 0.015)] = "lost"
        estimate = np.where(result == "lost", value, np.nan)
        value = np.where(result == "measured", value, np.nan)
        parts.append({"estimate": estimate, "person": person, "quantity": np.full(len(person), quantity, dtype=object),
                      "location": np.full(len(person), location, dtype=object),
                      "wear_start": starts, "wear_end": ends, "value": value, "result": result,
                      "mrd": np.where(result == "below_mrd", mrd, np.nan)})
    columns = {key: np.concatenate([part[key] for part in parts]) for key in parts[0]}
    return SyntheticLab(on, n_people, n_months, len(ring_wearers), len(lens_wearers), columns)


def _nullable(values: np.ndarray) -> list:
    """Floats with NaN as None, for the database."""
    return [None if np.isnan(v) else float(v) for v in values]


def insert(connection: sa.Connection, lab: SyntheticLab) -> np.ndarray:
    """Insert the people, their records and the estimates with Core executemany; person ids."""
    now = datetime.now(UTC)
    connection.execute(sa.insert(Person.__table__), [
        {"login": f"worker{i:04d}", "name": f"Worker {i:04d}", "email": None,
         "category": "adult_worker", "active": True, "created_at": now}
        for i in range(lab.n_people)
    ])
    ids = np.array(connection.scalars(
        sa.select(Person.id).where(Person.login.like("worker%")).order_by(Person.login)).all())
    c = lab.columns
    starts = c["wear_start"].astype(object)
    ends = c["wear_end"].astype(object)
    values, mrds = _nullable(c["value"]), _nullable(c["mrd"])
    connection.execute(sa.insert(DoseRecord.__table__), [
        {"person_id": int(ids[p]), "wear_start": s, "wear_end": e, "quantity": q, "location": l,
         "value_msv": v, "result": r, "mrd_msv": m, "source": "dosimetry_report", "version": 1,
         "entered_unit": "mSv", "created_at": now}
        for p, s, e, q, l, v, r, m in zip(c["person"].tolist(), starts, ends, c["quantity"],
                                          c["location"], values, c["result"], mrds)
    ])
    _insert_estimates(connection, lab, ids, now)
    return ids


def _insert_estimates(connection: sa.Connection, lab: SyntheticLab, ids: np.ndarray,
                      now: datetime) -> None:
    """A second version, the safety officer's estimate, for each lost result old enough."""
    c = lab.columns
    at = np.flatnonzero(lab.estimated)
    wanted = {(int(ids[c["person"][i]]), c["quantity"][i], c["location"][i],
               c["wear_start"][i].astype(object)): float(c["estimate"][i]) for i in at}
    lost = connection.execute(sa.select(
        DoseRecord.id, DoseRecord.person_id, DoseRecord.quantity, DoseRecord.location,
        DoseRecord.wear_start, DoseRecord.wear_end).where(DoseRecord.result == "lost")).all()
    connection.execute(sa.insert(DoseRecord.__table__), [
        {"person_id": person_id, "wear_start": start, "wear_end": end, "quantity": quantity,
         "location": location, "value_msv": wanted[key], "result": "measured", "mrd_msv": None,
         "source": "rso_estimate", "basis": "The wearer's usual dose for this dosimeter.",
         "supersedes_id": record_id, "version": 2, "reason": "Dosimeter lost; estimate entered.",
         "entered_unit": "mSv", "created_at": now}
        for record_id, person_id, quantity, location, start, end in lost
        if (key := (person_id, str(quantity), str(location), start)) in wanted
    ])


def build(path: str, n_people: int, years: int, on: date, seed: int = SEED):
    """A fresh, migrated SQLite file at `path` holding the synthetic lab; returns (app, lab)."""
    from flask_migrate import upgrade

    from models.core.settings import lab_settings
    from models.exposure.investigation_ops import raise_investigations
    from models.exposure.lab_ops import evaluate_lab
    from models.exposure.limit_set_ops import install_preset
    from models.people.person_ops import add_person
    from models.people.tables import Role
    from webapp import create_app
    from webapp.extensions import db
    from webapp.passwords import hash_password

    for suffix in ("", "-journal", "-wal", "-shm"):
        if os.path.exists(path + suffix):
            os.remove(path + suffix)
    lab = generate(n_people, years, on, seed)
    app = create_app({"SQLALCHEMY_DATABASE_URI": f"sqlite:///{os.path.abspath(path)}",
                      "WTF_CSRF_ENABLED": False, "RATELIMIT_ENABLED": False, "MAIL_SERVER": ""})
    with app.app_context():
        upgrade()
        with db.engine.begin() as connection:
            insert(connection, lab)
        # The rest goes through the ORM, as the app would do it, so it is audited.
        lab_settings(db.session).limit_set = install_preset(db.session, "icrp103")
        add_person(db.session, login=OFFICER_LOGIN, name="Safety Officer",
                   roles={Role.SAFETY_OFFICER}, password_hash=hash_password(OFFICER_PASSWORD))
        db.session.commit()
        raise_investigations(db.session, evaluate_lab(db.session, on))
        db.session.commit()
    return app, lab
