"""Vectorised dose engine: dose records in, dose per person x series x period kind out.

Pure numpy; no loop over records or people. Array shapes use N records, P people,
S = len(Series) and T = len(PeriodKind), both in their StrEnum order.

Decisions, shown here once so pages can quote them:
- Dose counts up to the evaluation date: a window counts [start, min(end, on)].
- prorate_days: a record is spread uniformly over its wear days (both ends inclusive) and counts
  the share of its days inside the counted window. wear_end: the whole record counts in the
  window containing its wear_end date, so a record ending after `on` does not count yet.
- Records starting after `on` are ignored altogether, so an evaluation on a past date does not
  depend on records that came later (this includes the lens and fetal source choice).
- Only the (quantity, location) pairs in SOURCES are counted; any other pair is ignored.
"""
from dataclasses import dataclass
from datetime import date

import numpy as np

from models.core.codes import (
    SOURCES,
    LensSource,
    Location,
    MrdPolicy,
    PeriodKind,
    Proration,
    Quantity,
    Result,
    Series,
    code,
    encode,
)
from models.exposure.periods import Windows, fixed_windows, period_windows

_HP10_WB, _HP007_WB, _HP3, _LEFT, _RIGHT, _ABDOMEN = range(len(SOURCES))
_CHANNEL = np.full((len(Quantity), len(Location)), -1, dtype=np.int8)
for _channel, (_q, _l) in enumerate(SOURCES):
    _CHANNEL[code(_q), code(_l)] = _channel

# Series read straight from one channel; lens, worst hand and fetus are derived.
_DIRECT = {
    Series.EFFECTIVE: _HP10_WB,
    Series.SKIN: _HP007_WB,
    Series.LEFT_HAND: _LEFT,
    Series.RIGHT_HAND: _RIGHT,
}
_LENS_SUBSTITUTE = {LensSource.HP007: _HP007_WB, LensSource.HP10: _HP10_WB}
# A lost or unreturned dosimeter, or a measured result without a value, leaves a hole in the dose.
_MAY_LACK_VALUE = np.array([code(r) for r in (Result.MEASURED, Result.LOST, Result.NOT_RETURNED)])
_LONG = {PeriodKind.FIVE_YEAR_BLOCK, PeriodKind.ROLLING_FIVE_YEARS}
_MRD_FACTOR = {MrdPolicy.ZERO: 0.0, MrdPolicy.HALF: 0.5, MrdPolicy.FULL: 1.0}


@dataclass(frozen=True)
class Policies:
    """Counting policies in force; shown on every summary. Strings are accepted for each field."""

    proration: Proration = Proration.PRORATE_DAYS
    mrd: MrdPolicy = MrdPolicy.ZERO
    lens_source: LensSource = LensSource.HP007
    # Each lab sets the first year of its ICRP defined periods; this is only the shipped default.
    first_block_year: int = 2021

    def __post_init__(self):
        object.__setattr__(self, "proration", Proration(self.proration))
        object.__setattr__(self, "mrd", MrdPolicy(self.mrd))
        object.__setattr__(self, "lens_source", LensSource(self.lens_source))


@dataclass(frozen=True)
class DoseRecords:
    """N dose records as columns.

    person: (N,) int index 0..P-1 (see `person_index`); quantity, location, result: (N,) int codes
    or the StrEnum values as strings; wear_start, wear_end: (N,) dates, both inclusive, already
    lab-local; value, mrd: (N,) float mSv, NaN (or None) for none.
    """

    person: np.ndarray
    quantity: np.ndarray
    location: np.ndarray
    wear_start: np.ndarray
    wear_end: np.ndarray
    value: np.ndarray
    result: np.ndarray
    mrd: np.ndarray

    def __post_init__(self):
        columns = {
            "person": np.asarray(self.person, dtype=np.int64),
            "quantity": _codes(Quantity, self.quantity),
            "location": _codes(Location, self.location),
            "wear_start": np.asarray(self.wear_start, dtype="datetime64[D]"),
            "wear_end": np.asarray(self.wear_end, dtype="datetime64[D]"),
            "value": np.asarray(self.value, dtype=float),
            "result": _codes(Result, self.result),
            "mrd": np.asarray(self.mrd, dtype=float),
        }
        shapes = {name: column.shape for name, column in columns.items()}
        if len(set(shapes.values())) != 1 or columns["person"].ndim != 1:
            raise ValueError(f"columns must be 1-d and of one length: {shapes}")
        if np.any(np.isnat(columns["wear_start"]) | np.isnat(columns["wear_end"])):
            raise ValueError("every record needs wear_start and wear_end")
        if np.any(columns["wear_end"] < columns["wear_start"]):
            raise ValueError("a wear period ends before it starts")
        for name, column in columns.items():
            object.__setattr__(self, name, column)

    def __len__(self) -> int:
        return len(self.person)


def _codes(cls, values) -> np.ndarray:
    """int8 codes from integer codes or string values."""
    array = np.asarray(values)
    if array.dtype.kind not in "iu":
        return encode(cls, array)
    if array.size and not 0 <= array.min() <= array.max() < len(cls):
        raise ValueError(f"{cls.__name__} code out of range")
    return array.astype(np.int8)


def person_index(person_ids, people) -> np.ndarray:
    """(N,) position in `people` (P,) of each of `person_ids` (N,); KeyError for an unknown id."""
    people = np.asarray(people)
    ids = np.asarray(person_ids)
    order = np.argsort(people)
    ordered = people[order]
    at = np.searchsorted(ordered, ids)
    found = at < len(ordered)
    found[found] = ordered[at[found]] == ids[found]
    if not np.all(found):
        raise KeyError(f"dose records for people not in the list: {np.unique(ids[~found])}")
    return order[at]


@dataclass(frozen=True)
class DoseTotals:
    """Engine output for P people on one date.

    dose: (P, S, T) float mSv, NaN where the person has no such window.
    missing: (P, S, T) int, records in the window that carry no dose yet (lost or not returned
    without an estimate, or measured without a value): pages show "n results missing".
    quantity: (P, S) Quantity codes of the records behind each series.
    location: (P, S, T) Location codes (the worst hand can change from one period to the next).
    """

    on: date
    policies: Policies
    windows: Windows
    dose: np.ndarray
    missing: np.ndarray
    quantity: np.ndarray
    location: np.ndarray


def compute_doses(
    records: DoseRecords,
    n_people: int,
    on: date,
    policies: Policies = Policies(),
    pregnancy_start=None,
    pregnancy_end=None,
) -> DoseTotals:
    """Dose of every series in every period kind for P people on `on` (see module docstring).

    pregnancy_start, pregnancy_end: (P,) dates or NaT, as for periods.period_windows.
    """
    windows = period_windows(
        on, n_people, policies.first_block_year, pregnancy_start, pregnancy_end
    )
    if len(records) and not 0 <= records.person.min() <= records.person.max() < n_people:
        raise ValueError("a person index is outside 0..n_people-1")
    on_day = _day(on)
    # Day numbers fit int32, which halves the memory traffic of the per-period passes.
    first = records.wear_start.view(np.int64).astype(np.int32)
    last = records.wear_end.view(np.int64).astype(np.int32)
    n_channels = len(SOURCES)
    size = n_people * n_channels
    channel = _CHANNEL.ravel()[records.quantity * len(Location) + records.location]
    # Records that count for nothing go to a spare bin past the end instead of being copied out.
    key = np.where((channel >= 0) & (first <= on_day), records.person * n_channels + channel, size)
    amount = _amount(records, policies.mrd)
    prorate = policies.proration is Proration.PRORATE_DAYS
    rate = amount / (last - first + 1) if prorate else amount
    maybe_lacking = np.flatnonzero(np.isnan(records.value))
    lacking = maybe_lacking[np.isin(records.result[maybe_lacking], _MAY_LACK_VALUE)]

    raw = np.zeros((size + 1, len(PeriodKind)))
    holes = np.zeros((size + 1, len(PeriodKind)))

    def window_of(rows, lo, hi):
        """(lo, hi) for the records `rows`: as given if scalars, else looked up per person."""
        if np.ndim(lo) == 0:
            return lo, hi
        person = records.person[rows]
        return lo[person], hi[person]

    def add(t: int, rows, lo, hi) -> None:
        """Sum records `rows`, and the missing results, into period kind t over [lo, hi]."""
        share = _share(first[rows], last[rows], *window_of(rows, lo, hi), prorate)
        raw[:, t] = np.bincount(key[rows], weights=share * rate[rows], minlength=size + 1)
        share = _share(first[lacking], last[lacking], *window_of(lacking, lo, hi), prorate)
        holes[:, t] = np.bincount(key[lacking], weights=share > 0, minlength=size + 1)

    fixed = fixed_windows(on, policies.first_block_year)
    # Short windows only need records ending inside the widest of them: a small part of the history.
    short_start = min(_day(start) for kind, (start, _) in fixed.items() if kind not in _LONG)
    recent = np.flatnonzero(last >= short_start)
    for kind, (start, end) in fixed.items():
        rows = slice(None) if kind in _LONG else recent
        add(code(kind), rows, _day(start), min(_day(end), on_day))

    t = code(PeriodKind.PREGNANCY)
    pregnant = windows.exists[:, t]
    if pregnant.any():
        # Empty windows get lo > hi so nothing overlaps them.
        lo = np.where(pregnant, windows.start[:, t].view(np.int64), 1).astype(np.int32)
        hi = np.where(pregnant, windows.counted_end[:, t].view(np.int64), 0).astype(np.int32)
        add(t, np.flatnonzero(pregnant[records.person]), lo, hi)

    n_periods = len(PeriodKind)
    raw = raw[:size].reshape(n_people, n_channels, n_periods)
    holes = holes[:size].reshape(n_people, n_channels, n_periods).astype(np.int64)
    has = np.bincount(key, minlength=size + 1)[:size].reshape(n_people, n_channels) > 0
    lens_channel = np.where(has[:, _HP3], _HP3, _LENS_SUBSTITUTE[policies.lens_source])
    fetal_channel = np.where(has[:, _ABDOMEN], _ABDOMEN, _HP10_WB)
    dose = _series(raw, lens_channel, fetal_channel, np.maximum(raw[:, _LEFT], raw[:, _RIGHT]))
    # Either hand may turn out the worse once its missing results arrive.
    missing = _series(holes, lens_channel, fetal_channel, holes[:, _LEFT] + holes[:, _RIGHT])
    quantity, location = _sources(raw, lens_channel, fetal_channel)
    return DoseTotals(
        on=on,
        policies=policies,
        windows=windows,
        dose=np.where(windows.exists[:, None, :], dose, np.nan),
        missing=missing,
        quantity=quantity,
        location=location,
    )


def _day(day: date) -> int:
    """Day number (days since 1970-01-01) of a date."""
    return int(np.datetime64(day, "D").astype(np.int64))


def _share(first: np.ndarray, last: np.ndarray, lo, hi, prorate: bool) -> np.ndarray:
    """Per record: wear days inside [lo, hi] (prorate_days), or whether wear_end is inside."""
    if prorate:
        days = np.minimum(last, hi) - np.maximum(first, lo) + 1
        return np.maximum(days, 0, out=days)
    return (last >= lo) & (last <= hi)


def _amount(records: DoseRecords, mrd_policy: MrdPolicy) -> np.ndarray:
    """(N,) mSv each record counts for before proration."""
    amount = np.nan_to_num(records.value, nan=0.0)
    below = np.flatnonzero(records.result == code(Result.BELOW_MRD))
    amount[below] = np.nan_to_num(records.mrd[below], nan=0.0) * _MRD_FACTOR[mrd_policy]
    amount[records.result == code(Result.UNUSED)] = 0.0
    return amount


def _series(
    per_channel: np.ndarray,
    lens_channel: np.ndarray,
    fetal_channel: np.ndarray,
    worst_hand: np.ndarray,
) -> np.ndarray:
    """(P, S, T) series from (P, channels, T) channel sums and the (P, T) worst-hand figure."""
    n_people, _, n_periods = per_channel.shape
    people = np.arange(n_people)
    out = np.empty((n_people, len(Series), n_periods), dtype=per_channel.dtype)
    for series, channel in _DIRECT.items():
        out[:, code(series)] = per_channel[:, channel]
    out[:, code(Series.LENS)] = per_channel[people, lens_channel]
    out[:, code(Series.WORST_HAND)] = worst_hand
    out[:, code(Series.FETUS)] = per_channel[people, fetal_channel]
    return out


def _sources(
    raw: np.ndarray, lens_channel: np.ndarray, fetal_channel: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """(P, S) Quantity codes and (P, S, T) Location codes behind each series."""
    n_people, _, n_periods = raw.shape
    channel = np.empty((n_people, len(Series), n_periods), dtype=np.int64)
    for series, direct in _DIRECT.items():
        channel[:, code(series)] = direct
    channel[:, code(Series.LENS)] = lens_channel[:, None]
    channel[:, code(Series.FETUS)] = fetal_channel[:, None]
    # Ties (both hands equal, often both zero) report the left hand.
    channel[:, code(Series.WORST_HAND)] = np.where(raw[:, _RIGHT] > raw[:, _LEFT], _RIGHT, _LEFT)
    quantities = np.array([code(q) for q, _ in SOURCES], dtype=np.int8)
    locations = np.array([code(l) for _, l in SOURCES], dtype=np.int8)
    return quantities[channel[:, :, 0]], locations[channel]
