from datetime import date, timedelta

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

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
    decode,
    encode,
)
from models.exposure.engine import DoseRecords, Policies, compute_doses, person_index

D = date
NAN = float("nan")
WB, LEFT, RIGHT, EYE, ABDOMEN = (
    Location.WHOLE_BODY,
    Location.LEFT_HAND,
    Location.RIGHT_HAND,
    Location.EYE,
    Location.ABDOMEN,
)
HP10, HP007, HP3 = Quantity.HP10, Quantity.HP007, Quantity.HP3


def make(*rows) -> DoseRecords:
    """Records from rows (person, quantity, location, start, end, value[, result[, mrd]])."""
    full = [row + (Result.MEASURED, NAN)[len(row) - 6 :] for row in rows]
    columns = list(zip(*full)) if full else [[]] * 8
    return DoseRecords(*columns)


def dose(totals, person, series, period) -> float:
    return totals.dose[person, code(series), code(period)]


def test_codes_round_trip():
    codes = encode(Quantity, ["Hp(3)", "Hp(10)", Quantity.HP007])
    assert codes.tolist() == [2, 0, 1]
    assert decode(Quantity, codes) == [HP3, HP10, HP007]
    assert code(Location.ABDOMEN) == 4
    with pytest.raises(ValueError):
        encode(Result, ["measured", "misplaced"])


# 15 Dec to 14 Jan, both inclusive: 31 days, 17 in December and 14 in January.
WINTER = make((0, HP10, WB, D(2024, 12, 15), D(2025, 1, 14), 3.1))


@pytest.mark.parametrize(
    "proration, on, period, expected",
    [
        (Proration.PRORATE_DAYS, D(2024, 12, 31), PeriodKind.YEAR, 3.1 * 17 / 31),
        (Proration.PRORATE_DAYS, D(2025, 12, 31), PeriodKind.YEAR, 3.1 * 14 / 31),
        (Proration.PRORATE_DAYS, D(2024, 12, 31), PeriodKind.MONTH, 3.1 * 17 / 31),
        (Proration.PRORATE_DAYS, D(2025, 1, 31), PeriodKind.MONTH, 3.1 * 14 / 31),
        (Proration.PRORATE_DAYS, D(2025, 1, 14), PeriodKind.ROLLING_12_MONTHS, 3.1),
        # counted only up to the evaluation date: 5 of its 31 days
        (Proration.PRORATE_DAYS, D(2025, 1, 5), PeriodKind.YEAR, 3.1 * 5 / 31),
        (Proration.PRORATE_DAYS, D(2024, 12, 14), PeriodKind.YEAR, 0.0),
        (Proration.WEAR_END, D(2024, 12, 31), PeriodKind.YEAR, 0.0),
        (Proration.WEAR_END, D(2025, 12, 31), PeriodKind.YEAR, 3.1),
        (Proration.WEAR_END, D(2025, 1, 14), PeriodKind.MONTH, 3.1),
        # its wear period has not ended on the evaluation date yet
        (Proration.WEAR_END, D(2025, 1, 13), PeriodKind.YEAR, 0.0),
    ],
)
def test_proration_across_new_year(proration, on, period, expected):
    totals = compute_doses(WINTER, 1, on, Policies(proration=proration))
    assert dose(totals, 0, Series.EFFECTIVE, period) == pytest.approx(expected)


@pytest.mark.parametrize(
    "proration, on, expected",
    [
        (Proration.PRORATE_DAYS, D(2024, 3, 31), 0.7),  # 7 of 14 days in Q1
        (Proration.PRORATE_DAYS, D(2024, 6, 30), 0.7),
        (Proration.WEAR_END, D(2024, 3, 31), 0.0),
        (Proration.WEAR_END, D(2024, 6, 30), 1.4),
    ],
)
def test_quarter_boundary(proration, on, expected):
    records = make((0, HP10, WB, D(2024, 3, 25), D(2024, 4, 7), 1.4))
    totals = compute_doses(records, 1, on, Policies(proration=proration))
    assert dose(totals, 0, Series.EFFECTIVE, PeriodKind.QUARTER) == pytest.approx(expected)


@pytest.mark.parametrize(
    "policy, result, value, mrd, expected, missing",
    [
        (MrdPolicy.ZERO, Result.BELOW_MRD, NAN, 0.1, 0.0, 0),
        (MrdPolicy.HALF, Result.BELOW_MRD, NAN, 0.1, 0.05, 0),
        (MrdPolicy.FULL, Result.BELOW_MRD, NAN, 0.1, 0.1, 0),
        # the reported value of a below-MRD result is not used; the policy decides
        (MrdPolicy.FULL, Result.BELOW_MRD, 0.0, 0.1, 0.1, 0),
        (MrdPolicy.HALF, Result.BELOW_MRD, NAN, NAN, 0.0, 0),
        (MrdPolicy.FULL, Result.UNUSED, 0.4, 0.1, 0.0, 0),
        (MrdPolicy.FULL, Result.MEASURED, 0.4, 0.1, 0.4, 0),
        (MrdPolicy.ZERO, Result.LOST, NAN, NAN, 0.0, 1),
        (MrdPolicy.ZERO, Result.NOT_RETURNED, NAN, NAN, 0.0, 1),
        (MrdPolicy.ZERO, Result.MEASURED, NAN, NAN, 0.0, 1),
        # a lost dosimeter with a value given counts it
        (MrdPolicy.ZERO, Result.LOST, 0.3, NAN, 0.3, 0),
    ],
)
def test_result_and_mrd_policies(policy, result, value, mrd, expected, missing):
    records = make((0, HP10, WB, D(2024, 1, 1), D(2024, 1, 31), value, result, mrd))
    totals = compute_doses(records, 1, D(2024, 1, 31), Policies(mrd=policy))
    month = code(PeriodKind.MONTH)
    assert totals.dose[0, code(Series.EFFECTIVE), month] == pytest.approx(expected)
    assert totals.missing[0, code(Series.EFFECTIVE), month] == missing
    assert totals.missing[0, code(Series.EFFECTIVE), code(PeriodKind.YEAR)] == missing
    # a missing result in January is not missing from a window it does not touch
    later = compute_doses(records, 1, D(2024, 2, 29), Policies(mrd=policy))
    assert later.missing[0, code(Series.EFFECTIVE), month] == 0


LENS_RECORDS = make(
    (0, HP3, EYE, D(2024, 1, 1), D(2024, 1, 31), 0.4),
    (0, HP007, WB, D(2024, 1, 1), D(2024, 1, 31), 1.0),
    (0, HP10, WB, D(2024, 1, 1), D(2024, 1, 31), 0.8),
    (1, HP007, WB, D(2024, 1, 1), D(2024, 1, 31), 1.0),
    (1, HP10, WB, D(2024, 1, 1), D(2024, 1, 31), 0.8),
    # person 2 gets a lens dosimeter only after the evaluation date
    (2, HP007, WB, D(2024, 1, 1), D(2024, 1, 31), 1.0),
    (2, HP10, WB, D(2024, 1, 1), D(2024, 1, 31), 0.8),
    (2, HP3, EYE, D(2024, 2, 1), D(2024, 2, 29), 0.2),
)


@pytest.mark.parametrize(
    "source, person, expected, quantity, location",
    [
        (LensSource.HP007, 0, 0.4, HP3, EYE),
        (LensSource.HP10, 0, 0.4, HP3, EYE),
        (LensSource.HP007, 1, 1.0, HP007, WB),
        (LensSource.HP10, 1, 0.8, HP10, WB),
        (LensSource.HP007, 2, 1.0, HP007, WB),
    ],
)
def test_lens_substitution(source, person, expected, quantity, location):
    totals = compute_doses(LENS_RECORDS, 3, D(2024, 1, 31), Policies(lens_source=source))
    lens = code(Series.LENS)
    assert dose(totals, person, Series.LENS, PeriodKind.YEAR) == pytest.approx(expected)
    assert totals.quantity[person, lens] == code(quantity)
    assert (totals.location[person, lens] == code(location)).all()


# The example: Hp(0.07) whole body 4 mSv in each of January, February and March, and an
# Hp(3) eye dosimeter worn in March only (1 mSv). Lens year = 4 (Jan, Hp(0.07)) + 4 (Feb, Hp(0.07))
# + 1 (Mar, Hp(3) worn every day, so March's Hp(0.07) does not count) = 9.0 mSv.
EYE_FROM_MARCH = make(
    (0, HP007, WB, D(2024, 1, 1), D(2024, 1, 31), 4.0),
    (0, HP007, WB, D(2024, 2, 1), D(2024, 2, 29), 4.0),
    (0, HP007, WB, D(2024, 3, 1), D(2024, 3, 31), 4.0),
    (0, HP3, EYE, D(2024, 3, 1), D(2024, 3, 31), 1.0),
    # person 1 starts the eye dosimeter on 15 March: 1-14 March (14 of 31 days) read Hp(0.07),
    # 4.0 x 14 / 31 = 1.806..., and the Hp(3) 0.5 mSv covers 15-31 March.
    (1, HP007, WB, D(2024, 3, 1), D(2024, 3, 31), 4.0),
    (1, HP3, EYE, D(2024, 3, 15), D(2024, 3, 31), 0.5),
)


@pytest.mark.parametrize(
    "person, period, expected",
    [
        (0, PeriodKind.YEAR, 9.0),
        (0, PeriodKind.QUARTER, 9.0),
        (0, PeriodKind.MONTH, 1.0),
        (1, PeriodKind.MONTH, 4.0 * 14 / 31 + 0.5),
    ],
)
def test_lens_source_is_decided_per_day(person, period, expected):
    totals = compute_doses(EYE_FROM_MARCH, 2, D(2024, 3, 31))
    assert dose(totals, person, Series.LENS, period) == pytest.approx(expected)
    assert totals.quantity[person, code(Series.LENS)] == code(HP3)
    assert not totals.stand_in[person, code(Series.LENS), code(period)]


@pytest.mark.parametrize(
    "lens_source, expected, quantity",
    [
        # Lens from Hp(10), but only Hp(0.07) was reported: the other whole-body quantity, flagged.
        (LensSource.HP10, 2.0, HP007),
        (LensSource.HP007, 2.0, HP007),
    ],
)
def test_lens_falls_back_to_the_other_whole_body_quantity(lens_source, expected, quantity):
    records = make((0, HP007, WB, D(2024, 1, 1), D(2024, 1, 31), 2.0))
    totals = compute_doses(records, 1, D(2024, 1, 31), Policies(lens_source=lens_source))
    at = (0, code(Series.LENS), code(PeriodKind.MONTH))
    assert totals.dose[at] == pytest.approx(expected)
    assert totals.quantity[0, code(Series.LENS)] == code(quantity)
    assert totals.stand_in[at] == (lens_source is LensSource.HP10)
    assert totals.missing[at] == 0


def test_days_with_only_rings_are_missing_for_the_lens_not_zero():
    # A ring in January, nothing on the body: the lens has no source at all that month.
    records = make((0, HP007, LEFT, D(2024, 1, 1), D(2024, 1, 31), 3.0))
    totals = compute_doses(records, 1, D(2024, 1, 31))
    at = (0, code(Series.LENS), code(PeriodKind.MONTH))
    assert totals.dose[at] == 0.0
    assert totals.missing[at] == 1


def test_fetal_dose_takes_whole_body_then_abdomen():
    # The example: declared 1 March; Hp(10) whole body 1.0 mSv in March (no abdomen
    # dosimeter yet), then the abdomen dosimeter in April (0.4 mSv) beside whole body 0.9 mSv.
    # Fetal dose = 1.0 (March, whole body) + 0.4 (April, abdomen) = 1.4 mSv.
    records = make(
        (0, HP10, WB, D(2024, 3, 1), D(2024, 3, 31), 1.0),
        (0, HP10, WB, D(2024, 4, 1), D(2024, 4, 30), 0.9),
        (0, HP10, ABDOMEN, D(2024, 4, 1), D(2024, 4, 30), 0.4),
    )
    declared = np.array(["2024-03-01"], dtype="datetime64[D]")
    totals = compute_doses(records, 1, D(2024, 4, 30), pregnancy_start=declared)
    assert dose(totals, 0, Series.FETUS, PeriodKind.PREGNANCY) == pytest.approx(1.4)


HANDS = make(
    (0, HP007, LEFT, D(2024, 1, 1), D(2024, 1, 31), 2.0),
    (0, HP007, RIGHT, D(2024, 1, 1), D(2024, 1, 31), 5.0),
    (0, HP007, LEFT, D(2024, 2, 1), D(2024, 2, 29), 3.0),
    (0, HP007, RIGHT, D(2024, 2, 1), D(2024, 2, 29), 0.5),
    (0, HP007, LEFT, D(2024, 3, 1), D(2024, 3, 31), NAN, Result.LOST, NAN),
    (0, HP007, RIGHT, D(2024, 3, 1), D(2024, 3, 31), NAN, Result.NOT_RETURNED, NAN),
)


@pytest.mark.parametrize(
    "on, period, left, right, worst, worst_location",
    [
        (D(2024, 1, 31), PeriodKind.MONTH, 2.0, 5.0, 5.0, RIGHT),
        (D(2024, 2, 29), PeriodKind.MONTH, 3.0, 0.5, 3.0, LEFT),
        # the worst hand of a period is the hand with the larger total, not a sum of monthly worsts
        (D(2024, 2, 29), PeriodKind.YEAR, 5.0, 5.5, 5.5, RIGHT),
        (D(2024, 3, 31), PeriodKind.MONTH, 0.0, 0.0, 0.0, LEFT),
    ],
)
def test_hands(on, period, left, right, worst, worst_location):
    totals = compute_doses(HANDS, 1, on)
    assert dose(totals, 0, Series.LEFT_HAND, period) == pytest.approx(left)
    assert dose(totals, 0, Series.RIGHT_HAND, period) == pytest.approx(right)
    assert dose(totals, 0, Series.WORST_HAND, period) == pytest.approx(worst)
    at = (0, code(Series.WORST_HAND), code(period))
    assert totals.location[at] == code(worst_location)


# Person 0: whole body (both quantities) in January, left ring in February, reported unused in March.
# Person 1: Hp(10) whole body only, in February. Person 2: nothing. Cases worked by hand.
REPORTED = make(
    (0, HP10, WB, D(2024, 1, 1), D(2024, 1, 31), 0.0),
    (0, HP007, WB, D(2024, 1, 1), D(2024, 1, 31), 0.0),
    (0, HP007, LEFT, D(2024, 2, 1), D(2024, 2, 29), NAN, Result.LOST, NAN),
    (0, HP10, WB, D(2024, 3, 1), D(2024, 3, 31), 0.0, Result.UNUSED, NAN),
    (1, HP10, WB, D(2024, 2, 1), D(2024, 2, 29), NAN, Result.BELOW_MRD, 0.1),
)


@pytest.mark.parametrize(
    "person, on, period, reported",
    [
        # a result of 0 mSv is a result; the hands, the eye and the abdomen wore nothing in January
        (0, D(2024, 1, 31), PeriodKind.MONTH, {Series.EFFECTIVE, Series.SKIN, Series.LENS, Series.FETUS}),
        # a lost ring is a result still missing, not a period without a dosimeter
        (0, D(2024, 2, 29), PeriodKind.MONTH, {Series.LEFT_HAND, Series.WORST_HAND}),
        (0, D(2024, 2, 29), PeriodKind.YEAR, {Series.EFFECTIVE, Series.SKIN, Series.LENS, Series.FETUS,
                                              Series.LEFT_HAND, Series.WORST_HAND}),
        # a dosimeter reported unused was not worn
        (0, D(2024, 3, 31), PeriodKind.MONTH, set()),
        # Hp(10) alone stands in for the lens and the fetus, but is no Hp(0.07) result for the skin
        (1, D(2024, 2, 29), PeriodKind.MONTH, {Series.EFFECTIVE, Series.LENS, Series.FETUS}),
        (2, D(2024, 2, 29), PeriodKind.YEAR, set()),
    ],
)
def test_a_series_without_a_result_in_the_period_is_not_reported(person, on, period, reported):
    totals = compute_doses(REPORTED, 3, on)
    found = {s for s in Series if totals.reported[person, code(s), code(period)]}
    assert found == reported


def test_worst_hand_missing_counts_both_hands():
    totals = compute_doses(HANDS, 1, D(2024, 3, 31))
    at = (0, slice(None), code(PeriodKind.MONTH))
    missing = dict(zip(Series, totals.missing[at]))
    hands = (Series.LEFT_HAND, Series.RIGHT_HAND, Series.WORST_HAND)
    assert [missing[hand] for hand in hands] == [1, 1, 2]


PREGNANCY_RECORDS = make(
    (0, HP10, WB, D(2024, 3, 1), D(2024, 3, 31), 3.1),
    (1, HP10, WB, D(2024, 3, 1), D(2024, 3, 31), 3.1),
    (1, HP10, ABDOMEN, D(2024, 3, 1), D(2024, 3, 31), 0.62),
    (2, HP10, WB, D(2024, 3, 1), D(2024, 3, 31), 3.1),
)
DECLARED = np.array(["2024-03-10", "2024-03-10", "NaT"], dtype="datetime64[D]")


@pytest.mark.parametrize(
    "person, expected, location",
    [
        (0, 3.1 * 22 / 31, WB),  # no abdomen dosimeter: whole body, from the declaration on
        (1, 0.62 * 22 / 31, ABDOMEN),
        (2, NAN, WB),  # no declaration, no window
    ],
)
def test_pregnancy_window(person, expected, location):
    totals = compute_doses(PREGNANCY_RECORDS, 3, D(2024, 3, 31), pregnancy_start=DECLARED)
    fetus = dose(totals, person, Series.FETUS, PeriodKind.PREGNANCY)
    assert fetus == pytest.approx(expected, nan_ok=True)
    assert totals.location[person, code(Series.FETUS), code(PeriodKind.PREGNANCY)] == code(location)
    assert np.isnan(totals.dose[person, :, code(PeriodKind.PREGNANCY)]).all() == (person == 2)


def test_pregnancy_declared_after_the_evaluation_date_has_no_window():
    totals = compute_doses(PREGNANCY_RECORDS, 3, D(2024, 3, 9), pregnancy_start=DECLARED)
    assert np.isnan(totals.dose[:, :, code(PeriodKind.PREGNANCY)]).all()


# 1 mSv in each calendar year 2019 to 2026, spread over the year.
YEARLY = make(*[(0, HP10, WB, D(y, 1, 1), D(y, 12, 31), 1.0) for y in range(2019, 2027)])


@pytest.mark.parametrize(
    "on, first_block_year, period, expected",
    [
        (D(2025, 12, 31), 2021, PeriodKind.FIVE_YEAR_BLOCK, 5.0),
        (D(2026, 6, 30), 2021, PeriodKind.FIVE_YEAR_BLOCK, 181 / 365),
        (D(2026, 6, 30), 2024, PeriodKind.FIVE_YEAR_BLOCK, 2 + 181 / 365),
        (D(2020, 6, 30), 2021, PeriodKind.FIVE_YEAR_BLOCK, 1 + 182 / 366),  # block 2016-2020
        # 1 Jul 2021 to 30 Jun 2026: 184 + 4 x 365 + 181 days
        (D(2026, 6, 30), 2021, PeriodKind.ROLLING_FIVE_YEARS, 184 / 365 + 4 + 181 / 365),
        # 1 Mar 2019 to 29 Feb 2024
        (D(2024, 2, 29), 2021, PeriodKind.ROLLING_FIVE_YEARS, 306 / 365 + 4 + 60 / 366),
    ],
)
def test_five_year_periods(on, first_block_year, period, expected):
    totals = compute_doses(YEARLY, 1, on, Policies(first_block_year=first_block_year))
    assert dose(totals, 0, Series.EFFECTIVE, period) == pytest.approx(expected)


def test_uncounted_records_are_ignored():
    records = make(
        (0, HP10, LEFT, D(2024, 1, 1), D(2024, 1, 31), 9.0),  # not a counted combination
        (0, HP007, EYE, D(2024, 1, 1), D(2024, 1, 31), 9.0),
        (0, HP10, WB, D(2024, 2, 1), D(2024, 2, 29), 9.0),  # starts after the evaluation date
    )
    totals = compute_doses(records, 1, D(2024, 1, 31))
    assert np.nansum(totals.dose) == 0.0


def test_policies_accept_strings():
    policies = Policies("wear_end", "half", "hp10", 2020)
    assert (policies.proration, policies.mrd, policies.lens_source) == (
        Proration.WEAR_END,
        MrdPolicy.HALF,
        LensSource.HP10,
    )


@pytest.mark.parametrize(
    "rows, n_people",
    [
        ([(1, HP10, WB, D(2024, 1, 1), D(2024, 1, 31), 1.0)], 1),  # person index out of range
        ([(0, HP10, WB, D(2024, 2, 1), D(2024, 1, 31), 1.0)], 1),  # wear period ends before it starts
        ([(0, "Hp(7)", WB, D(2024, 1, 1), D(2024, 1, 31), 1.0)], 1),  # unknown quantity
    ],
)
def test_invalid_input(rows, n_people):
    with pytest.raises(ValueError):
        compute_doses(make(*rows), n_people, D(2024, 1, 31))


def test_no_records_and_no_people():
    assert compute_doses(make(), 0, D(2024, 1, 31)).dose.shape == (0, len(Series), len(PeriodKind))
    empty = compute_doses(make(), 2, D(2024, 1, 31)).dose[:, :, :-1]
    assert (np.delete(empty, code(Series.FETUS), axis=1) == 0).all()
    # without a declared pregnancy there is no fetal dose at all, not a zero
    assert np.isnan(empty[:, code(Series.FETUS)]).all()


def test_person_index():
    assert person_index([30, 10, 30, 20], [10, 20, 30]).tolist() == [2, 0, 2, 1]
    with pytest.raises(KeyError):
        person_index([40], [10, 20, 30])


# --- property tests -------------------------------------------------------------------------

BASE = D(2023, 1, 1)
record_rows = st.lists(
    st.tuples(
        st.integers(0, 2),
        st.sampled_from(SOURCES),
        st.integers(0, 3 * 365 - 1),  # start, days after BASE
        st.integers(0, 119),  # extra wear days
        st.floats(0, 10),
    ),
    max_size=25,
)
prorations = st.sampled_from(list(Proration))


def _row(person, source, start, extra, value):
    """A record row from a generated tuple; start counts days after BASE."""
    first = BASE + timedelta(days=start)
    return (person, *source, first, first + timedelta(days=extra), value)


def _records(rows):
    return make(*[_row(*r) for r in rows])


def _years_earlier(day, years):
    """The same date `years` earlier, 28 February for a 29 February (plain calendar arithmetic)."""
    try:
        return D(day.year - years, day.month, day.day)
    except ValueError:
        return D(day.year - years, 2, 28)


def _reference_windows(on):
    """Every fixed period containing `on`, written out from the calendar (first block year 2021)."""
    quarter_month = 3 * ((on.month - 1) // 3) + 1
    next_quarter = D(on.year + 1, 1, 1) if quarter_month == 10 else D(on.year, quarter_month + 3, 1)
    next_month = D(on.year + 1, 1, 1) if on.month == 12 else D(on.year, on.month + 1, 1)
    block = 2021 + 5 * ((on.year - 2021) // 5)
    return {
        PeriodKind.YEAR: (D(on.year, 1, 1), D(on.year, 12, 31)),
        # the 12 calendar months up to `on`: from the day after the same date a year earlier
        PeriodKind.ROLLING_12_MONTHS: (_years_earlier(on, 1) + timedelta(days=1), on),
        PeriodKind.QUARTER: (D(on.year, quarter_month, 1), next_quarter - timedelta(days=1)),
        PeriodKind.MONTH: (D(on.year, on.month, 1), next_month - timedelta(days=1)),
        PeriodKind.FIVE_YEAR_BLOCK: (D(block, 1, 1), D(block + 4, 12, 31)),
        PeriodKind.ROLLING_FIVE_YEARS: (_years_earlier(on, 5) + timedelta(days=1), on),
    }


# Channel positions in SOURCES of the directly measured series.
DIRECT = {Series.EFFECTIVE: 0, Series.SKIN: 1, Series.LEFT_HAND: 3, Series.RIGHT_HAND: 4}


def _reference(rows, on, proration, lens_source=LensSource.HP007, declared=None):
    """Day by day, in plain Python: {(person, series, period): (dose, missing results)}.

    Each day of a record's wear is given to a series when that record is the series' source on
    that day: the dedicated dosimeter if one was worn, else the stand-in, else the other
    whole-body quantity. A day's share (value / wear days) is counted on that day (prorate_days)
    or on the record's last day (wear_end). Person 0 is pregnant from `declared`, if given.
    """
    stand_in = (HP007, WB) if lens_source == LensSource.HP007 else (HP10, WB)
    ladders = {  # sources in order of preference, per derived series
        Series.LENS: [(HP3, EYE), stand_in, ((HP10, WB) if stand_in == (HP007, WB) else (HP007, WB))],
        Series.FETUS: [(HP10, ABDOMEN), (HP10, WB), (HP007, WB)],
    }
    direct = {Series.EFFECTIVE: (HP10, WB), Series.SKIN: (HP007, WB),
              Series.LEFT_HAND: (HP007, LEFT), Series.RIGHT_HAND: (HP007, RIGHT)}
    records = []
    for p, source, s, extra, value in rows:
        first = BASE + timedelta(days=s)
        if first <= on:
            records.append((p, source, first, first + timedelta(days=extra), value))
    worn = {}  # (person, source) -> set of days worn
    for p, source, first, last, _ in records:
        days = worn.setdefault((p, source), set())
        days.update(first + timedelta(days=k) for k in range((last - first).days + 1))
    # Per person and series: the (day counted on, mSv) parts, and per record the days counted on
    # which it was worn with no source of the series worn (a missing result).
    parts, holes = {}, {}
    for index, (p, source, first, last, value) in enumerate(records):
        n_days = (last - first).days + 1
        for k in range(n_days):
            day = first + timedelta(days=k)
            counted_on = day if proration is Proration.PRORATE_DAYS else last
            for series in list(direct) + list(ladders):
                if series in direct:
                    chosen = direct[series]
                else:
                    chosen = next((src for src in ladders[series] if day in worn.get((p, src), ())), None)
                    if chosen is None:
                        holes.setdefault((p, series), {}).setdefault(index, []).append(counted_on)
                if source == chosen:
                    parts.setdefault((p, series), []).append((counted_on, value / n_days))
    windows = _reference_windows(on)
    if declared is not None:
        windows[PeriodKind.PREGNANCY] = (declared, on)
    out = {}
    for kind, (start, end) in windows.items():
        hi = min(end, on)
        for p in range(3):
            for series in list(direct) + list(ladders):
                if series is Series.FETUS and (p != 0 or declared is None):
                    continue  # no pregnancy, no fetal dose
                if kind is PeriodKind.PREGNANCY and series is not Series.FETUS:
                    continue
                total = sum(amount for day, amount in parts.get((p, series), []) if start <= day <= hi)
                missing = sum(any(start <= day <= hi for day in days)
                              for days in holes.get((p, series), {}).values())
                out[p, series, kind] = (total, missing)
    return out


@settings(max_examples=60, deadline=None, database=None)
@given(record_rows, st.integers(0, 3 * 365 + 120), prorations, st.sampled_from(list(LensSource)),
       st.integers(0, 3 * 365 + 120))
def test_matches_a_day_by_day_reference(rows, day, proration, lens_source, declared_day):
    on = BASE + timedelta(days=day)
    declared = BASE + timedelta(days=declared_day)
    declared = declared if declared <= on else None
    start = np.array([declared or "NaT", "NaT", "NaT"], dtype="datetime64[D]")
    totals = compute_doses(_records(rows), 3, on, Policies(proration=proration, lens_source=lens_source),
                           pregnancy_start=start)
    for (p, series, kind), (expected, missing) in _reference(rows, on, proration, lens_source,
                                                             declared).items():
        at = (p, code(series), code(kind))
        assert totals.dose[at] == pytest.approx(expected, abs=1e-9), (p, series, kind)
        if series in (Series.LENS, Series.FETUS):
            assert totals.missing[at] == missing, (p, series, kind)
    worst = totals.dose[:, code(Series.WORST_HAND)]
    hands = np.maximum(totals.dose[:, code(Series.LEFT_HAND)], totals.dose[:, code(Series.RIGHT_HAND)])
    np.testing.assert_allclose(worst, hands)


def _year_end_doses(records, proration, ends):
    """Dose of every series for each period ending on the given dates, summed."""
    return sum(
        compute_doses(records, 3, on, Policies(proration=proration)).dose[:, :, :-1] for on in ends
    )


@settings(max_examples=40, deadline=None, database=None)
@given(record_rows, prorations)
def test_months_and_quarters_add_up_to_the_year(rows, proration):
    records = _records(rows)
    year_end = compute_doses(records, 3, D(2024, 12, 31), Policies(proration=proration))
    year = year_end.dose[:, :, code(PeriodKind.YEAR)]
    month_ends = [D(2024, m + 1, 1) - timedelta(days=1) for m in range(1, 12)] + [D(2024, 12, 31)]
    quarter_ends = [D(2024, 3, 31), D(2024, 6, 30), D(2024, 9, 30), D(2024, 12, 31)]
    months = _year_end_doses(records, proration, month_ends)[:, :, code(PeriodKind.MONTH)]
    quarters = _year_end_doses(records, proration, quarter_ends)[:, :, code(PeriodKind.QUARTER)]
    # The worst hand is a maximum per period, and the lens and fetal sources are chosen from the
    # records known on each evaluation date, so only the directly measured series must add up.
    additive = [code(s) for s in DIRECT]
    np.testing.assert_allclose(months[:, additive], year[:, additive], atol=1e-9)
    np.testing.assert_allclose(quarters[:, additive], year[:, additive], atol=1e-9)


@settings(max_examples=60, deadline=None, database=None)
@given(
    record_rows,
    st.integers(0, 2),
    st.sampled_from(SOURCES),
    st.integers(0, 364),
    st.integers(0, 364),
    st.integers(0, 90),
    st.floats(0, 10),
    prorations,
)
def test_moving_a_record_inside_the_year_changes_nothing(
    rows, person, source, start, new_start, extra, value, proration
):
    # keep the record wholly inside 2024 (366 days) at both places
    start, new_start = min(start, 365 - extra), min(new_start, 365 - extra)
    year = D(2024, 1, 1)

    def year_dose(at):
        first = year + timedelta(days=at)
        moved = (person, *source, first, first + timedelta(days=extra), value)
        records = make(*[_row(*r) for r in rows], moved)
        totals = compute_doses(records, 3, D(2024, 12, 31), Policies(proration=proration))
        # The lens and the fetus read whichever dosimeter was worn on each day, so moving a record
        # can change which records they read: only the directly measured series must not move.
        return totals.dose[:, [code(s) for s in DIRECT], code(PeriodKind.YEAR)]

    np.testing.assert_allclose(year_dose(start), year_dose(new_start), atol=1e-9)


@settings(max_examples=60, deadline=None, database=None)
@given(record_rows, prorations)
def test_proration_neither_creates_nor_loses_dose(rows, proration):
    # records start in 2023-2025 and last at most 120 days: the years 2023-2026 cover them all
    records = _records(rows)
    ends = [D(y, 12, 31) for y in range(2023, 2027)]
    total = _year_end_doses(records, proration, ends)[:, :, code(PeriodKind.YEAR)]
    for series, channel in DIRECT.items():
        expected = sum(v for _, source, _, _, v in rows if source == SOURCES[channel])
        assert total[:, code(series)].sum() == pytest.approx(expected, abs=1e-9)
