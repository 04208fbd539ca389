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
- Lens and fetal sources are decided per day of wear, not per person: a day counts the dedicated
  dosimeter (Hp(3) at the eye; Hp(10) at the abdomen) if one was worn that day (any result but
  unused), else the stand-in (the lens source policy's whole-body quantity; Hp(10) whole body),
  else the other whole-body quantity (flagged in `DoseTotals.stand_in`). Days on which the person
  wore only other dosimeters (rings) count as missing results, never as zero. This is done on
  intervals: each stand-in record is cut into the pieces of its wear period that the dosimeters
  ranked above it did not cover, and the pieces are summed like records.
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
# Channels made of record pieces, after the measured ones: the stand-in (A) and the other
# whole-body quantity (B) on days without the dedicated dosimeter, and the days with neither (GAP).
_LENS_A, _LENS_B, _LENS_GAP, _FETUS_A, _FETUS_B, _FETUS_GAP = range(len(SOURCES), len(SOURCES) + 6)
_N_CHANNELS = len(SOURCES) + 6
_OTHER_WB = {_HP007_WB: _HP10_WB, _HP10_WB: _HP007_WB}
# Interval keys: person * _SPAN + day + _SHIFT keeps each person's days apart and non-negative.
_SPAN, _SHIFT = 1 << 33, 1 << 31
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

    dose: (P, S, T) float mSv, NaN where the person has no such window (the fetus: no pregnancy).
    missing: (P, S, T) int, results in the window that carry no dose yet (lost or not returned
    without an estimate, or measured without a value), plus, for the lens and the fetus, the
    records of other dosimeters worn on days that no series source covers: pages show
    "n results missing".
    quantity: (P, S) Quantity codes of the records behind each series (for the lens and fetus,
    the dedicated dosimeter if the person wore one, else the stand-in).
    location: (P, S, T) Location codes (the worst hand can change from one period to the next).
    stand_in: (P, S, T) bool, some days of the window counted the other whole-body quantity
    because the chosen stand-in was not reported for them (lens and fetus only).
    reported: (P, S, T) bool, the window holds a result (any, a lost one too) of a dosimeter
    worn that the series reads (for the lens and fetus, a stand-in's too); where not, its zero
    dose was never assessed.
    """

    on: date
    policies: Policies
    windows: Windows
    dose: np.ndarray
    missing: np.ndarray
    quantity: np.ndarray
    location: np.ndarray
    stand_in: np.ndarray
    reported: np.ndarray


@dataclass(frozen=True)
class _Rows:
    """What the per-period passes sum: the records, then the pieces cut from them.

    key: person * _N_CHANNELS + channel (records that count for nothing: the spare bin);
    first, last: the days the share is taken over; weight: mSv per share unit; lacking: index
    of the rows that are holes; hole: per lacking row, which record of which channel it is
    (a record cut in pieces is still one missing result); other: index of the rows read from
    the other whole-body quantity; worn: the row is a record of a dosimeter worn (not a piece).
    """

    key: np.ndarray
    first: np.ndarray
    last: np.ndarray
    weight: np.ndarray
    lacking: np.ndarray
    hole: np.ndarray
    other: np.ndarray
    worn: np.ndarray


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
    t_pregnancy = code(PeriodKind.PREGNANCY)
    pregnant = windows.exists[:, t_pregnancy]
    prorate = policies.proration is Proration.PRORATE_DAYS
    rows, has = _rows(records, n_people, on_day, policies, pregnant)
    size = n_people * _N_CHANNELS
    n_periods = len(PeriodKind)
    raw = np.zeros((size + 1, n_periods))
    holes = np.zeros((size + 1, n_periods))
    other_days = np.zeros((size + 1, n_periods))
    worn = np.zeros((size + 1, n_periods))
    row_person = rows.key // _N_CHANNELS

    def window_of(selected, lo, hi):
        """(lo, hi) for the rows `selected`: as given if scalars, else looked up per person."""
        if np.ndim(lo) == 0:
            return lo, hi
        person = np.minimum(row_person[selected], n_people - 1)
        return lo[person], hi[person]

    def share(selected, lo, hi):
        """Share of each selected row inside [lo, hi]."""
        return _share(rows.first[selected], rows.last[selected], *window_of(selected, lo, hi), prorate)

    def add(t: int, selected, lo, hi) -> None:
        """Sum rows `selected`, the holes, the other-quantity days and the records of dosimeters worn
        into period kind t over [lo, hi]."""
        shares = share(selected, lo, hi)
        raw[:, t] = np.bincount(rows.key[selected], weights=shares * rows.weight[selected], minlength=size + 1)
        worn[:, t] = np.bincount(rows.key[selected], weights=(shares > 0) & rows.worn[selected],
                                 minlength=size + 1)
        inside = share(rows.lacking, lo, hi) > 0
        _, once = np.unique(rows.hole[inside], return_index=True)
        holes[:, t] = np.bincount(rows.key[rows.lacking[inside][once]], minlength=size + 1)
        other_days[:, t] = np.bincount(rows.key[rows.other], weights=share(rows.other, lo, hi) > 0,
                                       minlength=size + 1)

    fixed = fixed_windows(on, policies.first_block_year)
    # Short windows only need rows ending inside the widest of them: a small part of the history.
    short_start = min(_day(start) for kind, (start, _) in fixed.items() if kind not in _LONG)
    recent = np.flatnonzero(rows.last >= short_start)
    for kind, (start, end) in fixed.items():
        selected = slice(None) if kind in _LONG else recent
        add(code(kind), selected, _day(start), min(_day(end), on_day))

    if pregnant.any():
        # Empty windows get lo > hi so nothing overlaps them.
        lo = np.where(pregnant, windows.start[:, t_pregnancy].view(np.int64), 1).astype(np.int32)
        hi = np.where(pregnant, windows.counted_end[:, t_pregnancy].view(np.int64), 0).astype(np.int32)
        in_pregnancy = row_person < n_people
        in_pregnancy[in_pregnancy] = pregnant[row_person[in_pregnancy]]
        add(t_pregnancy, np.flatnonzero(in_pregnancy), lo, hi)

    def channels(array):
        return array[:size].reshape(n_people, _N_CHANNELS, n_periods)

    raw, holes, other_days = channels(raw), channels(holes).astype(np.int64), channels(other_days)
    worn = channels(worn)[:, :len(SOURCES)] > 0
    lens_direct = _LENS_SUBSTITUTE[policies.lens_source]
    dose = _series(raw, has, lens_direct, np.maximum(raw[:, _LEFT], raw[:, _RIGHT]), gap=False)
    # Either hand may turn out the worse once its missing results arrive.
    missing = _series(holes, has, lens_direct, holes[:, _LEFT] + holes[:, _RIGHT], gap=True)
    dose[:, code(Series.FETUS)] = np.where(pregnant[:, None], dose[:, code(Series.FETUS)], np.nan)
    stand_in = np.zeros(dose.shape, dtype=bool)
    stand_in[:, code(Series.LENS)] = other_days[:, _LENS_B] > 0
    stand_in[:, code(Series.FETUS)] = other_days[:, _FETUS_B] > 0
    quantity, location = _sources(raw, has, lens_direct)
    return DoseTotals(
        on=on,
        policies=policies,
        windows=windows,
        dose=np.where(windows.exists[:, None, :], dose, np.nan),
        missing=missing,
        quantity=quantity,
        location=location,
        stand_in=stand_in,
        reported=_reported(worn),
    )


def _rows(records: DoseRecords, n_people: int, on_day: int, policies: Policies,
          pregnant: np.ndarray) -> tuple[_Rows, np.ndarray]:
    """The rows to sum, and (P, len(SOURCES)) whether each person has counted records per channel."""
    # Day numbers fit int32, which halves the memory traffic of the per-period passes.
    first = records.wear_start.view(np.int64).astype(np.int32)
    last = records.wear_end.view(np.int64).astype(np.int32)
    person = records.person
    channel = _CHANNEL.ravel()[records.quantity * len(Location) + records.location]
    counted = (channel >= 0) & (first <= on_day)
    size = n_people * _N_CHANNELS
    key = np.where(counted, person * _N_CHANNELS + channel, size)
    has = np.zeros((n_people, len(SOURCES)), dtype=bool)
    has[person[counted], channel[counted]] = True
    amount = _amount(records, policies.mrd)
    days = last - first + 1
    prorate = policies.proration is Proration.PRORATE_DAYS
    rate = amount / days if prorate else amount
    lacking = np.isnan(records.value) & np.isin(records.result, _MAY_LACK_VALUE)
    # A dosimeter reported unused was not worn: it covers no day.
    worn = counted & (records.result != code(Result.UNUSED))

    counted_in = [np.flatnonzero(counted & (channel == c)) for c in range(len(SOURCES))]
    worn_in = [rows[worn[rows]] for rows in counted_in]

    def of(by_channel, *channel_set, among=None):
        """Index of the records of these channels (of the people in `among`, if given)."""
        rows = np.concatenate([by_channel[c] for c in channel_set])
        return rows if among is None else rows[among[person[rows]]]

    whole_body = (_HP10_WB, _HP007_WB)
    lens_sub = _LENS_SUBSTITUTE[policies.lens_source]
    lens_other = _OTHER_WB[lens_sub]
    # Without an Hp(3) dosimeter the lens reads the stand-in's own channel: no pieces needed.
    with_eye = has[:, _HP3]
    cuts = (
        (_LENS_A, of(counted_in, lens_sub, among=with_eye), of(worn_in, _HP3)),
        (_LENS_B, of(counted_in, lens_other), of(worn_in, _HP3, lens_sub)),
        (_LENS_GAP, of(worn_in, _LEFT, _RIGHT, _ABDOMEN), of(worn_in, _HP3, *whole_body)),
        (_FETUS_A, of(counted_in, _HP10_WB, among=pregnant), of(worn_in, _ABDOMEN, among=pregnant)),
        (_FETUS_B, of(counted_in, _HP007_WB, among=pregnant),
         of(worn_in, _ABDOMEN, _HP10_WB, among=pregnant)),
        (_FETUS_GAP, of(worn_in, _LEFT, _RIGHT, _HP3, among=pregnant),
         of(worn_in, _ABDOMEN, *whole_body, among=pregnant)),
    )
    keys, firsts, lasts, weights, lacks, others = [key], [first], [last], [rate], [lacking], []
    origins = [np.arange(len(records))]
    offset = len(records)
    for slot, (piece_channel, source, cover) in enumerate(cuts, start=1):
        origin, piece_first, piece_last = _cut(person, first, last, source, cover)
        gap = piece_channel in (_LENS_GAP, _FETUS_GAP)
        keys.append(person[origin] * _N_CHANNELS + piece_channel)
        firsts.append(piece_first)
        # Counted whole at its wear end, a record's piece weighs its share of the record's days.
        lasts.append(piece_last if prorate else last[origin])
        kept = 1.0 if prorate else (piece_last - piece_first + 1) / days[origin]
        weights.append(np.zeros(len(origin)) if gap else rate[origin] * kept)
        lacks.append(np.ones(len(origin), dtype=bool) if gap else lacking[origin])
        origins.append(slot * len(records) + origin)
        if piece_channel in (_LENS_B, _FETUS_B):
            others.append(offset + np.arange(len(origin)))
        offset += len(origin)
    lacking_rows = np.flatnonzero(np.concatenate(lacks))
    rows = _Rows(
        key=np.concatenate(keys),
        first=np.concatenate(firsts).astype(np.int32),
        last=np.concatenate(lasts).astype(np.int32),
        weight=np.concatenate(weights),
        lacking=lacking_rows,
        hole=np.concatenate(origins)[lacking_rows],
        other=np.concatenate(others),
        worn=np.concatenate([worn, np.zeros(offset - len(records), dtype=bool)]),
    )
    return rows, has


def _union(person: np.ndarray, first: np.ndarray, last: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sorted, disjoint (start, end) interval keys covering the given days of each person."""
    base = person.astype(np.int64) * _SPAN + _SHIFT
    start, end = base + first, base + last
    order = np.argsort(start, kind="stable")
    start, end = start[order], end[order]
    if not len(start):
        return start, end
    reach = np.maximum.accumulate(end)
    new = np.ones(len(start), dtype=bool)
    new[1:] = start[1:] > reach[:-1] + 1
    closing = np.flatnonzero(np.append(new[1:], True))
    return start[new], reach[closing]


def _cut(person: np.ndarray, first: np.ndarray, last: np.ndarray, source: np.ndarray,
         cover: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Pieces of the wear periods of records `source` on days no record `cover` of the same person covers.

    Returns (record index, first day, last day) per piece.
    """
    concerned = np.zeros(int(person.max(initial=-1)) + 1, dtype=bool)
    concerned[person[source]] = True
    cover = cover[concerned[person[cover]]]  # only the covers of people with records to cut
    cover_start, cover_end = _union(person[cover], first[cover], last[cover])
    base = person[source].astype(np.int64) * _SPAN + _SHIFT
    a, b = base + first[source], base + last[source]
    inside_from = np.searchsorted(cover_end, a, "left")  # first cover ending on or after a
    inside_to = np.searchsorted(cover_start, b, "right")  # covers starting on or before b
    k = inside_to - inside_from
    # Most records are either untouched (k = 0) or inside one cover: only the rest need cutting.
    at_first = np.minimum(inside_from, max(len(cover_start) - 1, 0))
    if len(cover_start):
        inside_one = (k == 1) & (cover_start[at_first] <= a) & (cover_end[at_first] >= b)
    else:
        inside_one = np.zeros(len(source), dtype=bool)
    whole = np.flatnonzero(k <= 0)
    cut = np.flatnonzero((k > 0) & ~inside_one)
    n = k[cut] + 1  # k covers inside leave up to k + 1 pieces
    origin = np.repeat(cut, n)
    j = np.arange(int(n.sum())) - np.repeat(np.cumsum(n) - n, n)
    at = inside_from[origin] + j
    # Padded so the unused index of a first or last piece stays valid.
    ends, starts = np.append(cover_end, 0), np.append(cover_start, 0)
    lo = np.where(j == 0, a[origin], ends[at - 1] + 1)
    hi = np.where(j == k[origin], b[origin], starts[np.minimum(at, len(cover_start))] - 1)
    keep = lo <= hi
    origin = np.concatenate([whole, origin[keep]])
    lo = np.concatenate([a[whole], lo[keep]])
    hi = np.concatenate([b[whole], hi[keep]])
    return source[origin], lo - base[origin], hi - base[origin]


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


def _series(per_channel: np.ndarray, has: np.ndarray, lens_direct: int, worst_hand: np.ndarray,
            gap: bool) -> np.ndarray:
    """(P, S, T) series from (P, _N_CHANNELS, T) channel sums and the (P, T) worst-hand figure.

    gap: add the days no source covers (for the missing counts, not for doses).
    """
    n_people, _, n_periods = per_channel.shape
    out = np.empty((n_people, len(Series), n_periods), dtype=per_channel.dtype)
    for series, channel in _DIRECT.items():
        out[:, code(series)] = per_channel[:, channel]
    with_eye = has[:, _HP3, None]
    stand_in = np.where(with_eye, per_channel[:, _LENS_A], per_channel[:, lens_direct])
    out[:, code(Series.LENS)] = per_channel[:, _HP3] + stand_in + per_channel[:, _LENS_B]
    out[:, code(Series.WORST_HAND)] = worst_hand
    out[:, code(Series.FETUS)] = per_channel[:, _ABDOMEN] + per_channel[:, _FETUS_A] + per_channel[:, _FETUS_B]
    if gap:
        out[:, code(Series.LENS)] += per_channel[:, _LENS_GAP]
        out[:, code(Series.FETUS)] += per_channel[:, _FETUS_GAP]
    return out


def _reported(worn: np.ndarray) -> np.ndarray:
    """(P, S, T) whether a dosimeter a series reads was worn, from (P, len(SOURCES), T) per channel."""
    out = np.empty((worn.shape[0], len(Series), worn.shape[2]), dtype=bool)
    for series, channel in _DIRECT.items():
        out[:, code(series)] = worn[:, channel]
    whole_body = worn[:, _HP10_WB] | worn[:, _HP007_WB]
    out[:, code(Series.LENS)] = worn[:, _HP3] | whole_body
    out[:, code(Series.WORST_HAND)] = worn[:, _LEFT] | worn[:, _RIGHT]
    out[:, code(Series.FETUS)] = worn[:, _ABDOMEN] | whole_body
    return out


def _named_source(has: np.ndarray, dedicated: int, stand_in: int) -> np.ndarray:
    """(P,) channel that names a derived series: the dedicated dosimeter if worn, else the stand-in
    (or the other whole-body quantity when the stand-in was never reported)."""
    other = _OTHER_WB[stand_in]
    fallback = np.where(has[:, stand_in] | ~has[:, other], stand_in, other)
    return np.where(has[:, dedicated], dedicated, fallback)


def _sources(raw: np.ndarray, has: np.ndarray, lens_direct: int) -> tuple[np.ndarray, np.ndarray]:
    """(P, S) Quantity codes and (P, S, T) Location codes behind each series."""
    n_people, _, n_periods = raw.shape
    channel = np.empty((n_people, len(Series), n_periods), dtype=np.int64)
    for series, direct in _DIRECT.items():
        channel[:, code(series)] = direct
    channel[:, code(Series.LENS)] = _named_source(has, _HP3, lens_direct)[:, None]
    channel[:, code(Series.FETUS)] = _named_source(has, _ABDOMEN, _HP10_WB)[:, None]
    # Ties (both hands equal, often both zero) report the left hand.
    channel[:, code(Series.WORST_HAND)] = np.where(raw[:, _RIGHT] > raw[:, _LEFT], _RIGHT, _LEFT)
    quantities = np.array([code(q) for q, _ in SOURCES], dtype=np.int8)
    locations = np.array([code(l) for _, l in SOURCES], dtype=np.int8)
    return quantities[channel[:, :, 0]], locations[channel]
