"""Codes shared by the dose engine, its evaluation and the database layer.

Each class is a StrEnum so the database can store the value as text. Inside numpy arrays the
engine stores a member's position in its class (see `code`), which keeps the arrays small and
lets comparisons stay vectorised.
"""
import enum
from collections.abc import Iterable
from functools import cache

import numpy as np


class Quantity(enum.StrEnum):
    """ICRU operational quantity of a dose record."""

    HP10 = "Hp(10)"
    HP007 = "Hp(0.07)"
    HP3 = "Hp(3)"


class Location(enum.StrEnum):
    """Where the dosimeter was worn."""

    WHOLE_BODY = "whole_body"
    LEFT_HAND = "left_hand"
    RIGHT_HAND = "right_hand"
    EYE = "eye"
    ABDOMEN = "abdomen"


class Result(enum.StrEnum):
    """Status of a dosimetry result."""

    MEASURED = "measured"
    BELOW_MRD = "below_mrd"
    UNUSED = "unused"
    LOST = "lost"
    NOT_RETURNED = "not_returned"


class PeriodKind(enum.StrEnum):
    """Kind of period a dose is summed over; every one contains the evaluation date."""

    YEAR = "year"
    ROLLING_12_MONTHS = "rolling_12_months"
    QUARTER = "quarter"
    MONTH = "month"
    FIVE_YEAR_BLOCK = "five_year_block"
    ROLLING_FIVE_YEARS = "rolling_five_years"
    PREGNANCY = "pregnancy"


class Level(enum.StrEnum):
    """Status ladder; members are in order of severity, so a higher code is worse."""

    BELOW_1 = "below_1"
    LEVEL_1 = "level_1"
    LEVEL_2 = "level_2"
    LIMIT_REACHED = "limit_reached"


class WorkerCategory(enum.StrEnum):
    """Category a limit rule applies to."""

    ADULT_WORKER = "adult_worker"
    TRAINEE = "trainee"
    DECLARED_PREGNANT = "declared_pregnant"
    PUBLIC = "public"


class Proration(enum.StrEnum):
    """How a dose record is shared between periods."""

    PRORATE_DAYS = "prorate_days"
    WEAR_END = "wear_end"


class MrdPolicy(enum.StrEnum):
    """What a below-MRD result counts as."""

    ZERO = "zero"
    HALF = "half"
    FULL = "full"


class LensSource(enum.StrEnum):
    """Whole-body quantity that stands in for Hp(3) when a person has no lens dosimeter."""

    HP007 = "hp007"
    HP10 = "hp10"


class Series(enum.StrEnum):
    """A dose series the engine sums: one row of a person's exposure table per period."""

    EFFECTIVE = "effective"
    SKIN = "skin"
    LENS = "lens"
    LEFT_HAND = "left_hand"
    RIGHT_HAND = "right_hand"
    WORST_HAND = "worst_hand"
    FETUS = "fetus"


class LevelKind(enum.StrEnum):
    """How an investigation level is given."""

    FRACTION = "fraction"
    ABSOLUTE = "absolute"


@cache
def _positions(cls: type[enum.StrEnum]) -> dict[str, int]:
    """Position of each value in its class."""
    return {member.value: i for i, member in enumerate(cls)}


def code(member: enum.StrEnum) -> int:
    """Integer code of a member: its position in its class."""
    return _positions(type(member))[member.value]


def encode(cls: type[enum.StrEnum], values: Iterable) -> np.ndarray:
    """int8 codes of string values (or members); raises ValueError on an unknown value."""
    strings = np.asarray(values if isinstance(values, np.ndarray) else list(values), dtype=str)
    unique, inverse = np.unique(strings, return_inverse=True)
    positions = _positions(cls)
    unknown = [u for u in unique.tolist() if u not in positions]
    if unknown:
        raise ValueError(f"unknown {cls.__name__} value(s): {unknown}")
    lookup = np.array([positions[u] for u in unique.tolist()], dtype=np.int8)
    return lookup[inverse.reshape(strings.shape)]


def decode(cls: type[enum.StrEnum], codes: Iterable[int]) -> list:
    """Members for integer codes."""
    members = tuple(cls)
    return [members[int(c)] for c in np.asarray(codes).ravel()]




# Measured channels the series are built from, in channel order.
SOURCES: tuple[tuple[Quantity, Location], ...] = (
    (Quantity.HP10, Location.WHOLE_BODY),
    (Quantity.HP007, Location.WHOLE_BODY),
    (Quantity.HP3, Location.EYE),
    (Quantity.HP007, Location.LEFT_HAND),
    (Quantity.HP007, Location.RIGHT_HAND),
    (Quantity.HP10, Location.ABDOMEN),
)
