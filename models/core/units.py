"""Dose and dose-rate units accepted on entry, converted to mSv and uSv/h, with their sources."""
from __future__ import annotations

from dataclasses import dataclass

# 1 rem = 0.01 Sv (10 CFR 20.1004), so 1 mrem = 0.01 mSv and 1 mrem/h = 10 uSv/h.
MSV_PER_MREM = 0.01
USV_PER_MREM = 10.0
DOSE_UNITS = ("mSv", "mrem")

# 1 R = 2.58e-4 C/kg (10 CFR 20.1004); with W/e = 33.97 J/C (ICRU) that is about 8.76 mGy air
# kerma, so 1 mR/h is about 8.76 uGy/h air kerma, and 8.76 uSv/h with quality factor 1 for X-rays.
COULOMB_PER_KG_PER_ROENTGEN = 2.58e-4
JOULE_PER_COULOMB_IN_AIR = 33.97
AIR_KERMA_UGY_PER_MR = COULOMB_PER_KG_PER_ROENTGEN * JOULE_PER_COULOMB_IN_AIR * 1e6 / 1e3

# The logbook counts 1 mR/h as 10 uSv/h, the trade's "1 R ~ 1 rem" (common practice), not 8.76:
# the rules quote their action levels in both units at this ratio (25 uSv/h = 2.5 mR/h,
# Tennessee 0400-20-06-.07(1)(a)), so a reading over 2.5 mR/h must not pass as under 25 uSv/h;
# and at diffraction energies H*(10) per unit air kerma is above 1 Sv/Gy, so 10 errs safe.
USV_PER_MR = 10.0


@dataclass(frozen=True)
class RateUnit:
    """A dose-rate unit a meter may read in, with its factor to uSv/h and the factor's source."""

    code: str
    label: str
    usv_h_per_unit: float
    source: str


RATE_UNITS = {
    unit.code: unit for unit in (
        RateUnit("uSv/h", "µSv/h", 1.0, "SI unit, stored as entered"),
        RateUnit("mrem/h", "mrem/h", USV_PER_MREM, "1 rem = 0.01 Sv (10 CFR 20.1004)"),
        RateUnit("mR/h", "mR/h", USV_PER_MR,
                 "1 R = 2.58e-4 C/kg (10 CFR 20.1004), about 8.76 mGy air kerma (ICRU); counted "
                 "as 10 µSv/h per mR/h, the conservative '1 R ~ 1 rem' of common practice"),
    )
}


def to_msv(value: float | None, unit: str) -> float | None:
    """A dose in mSv from a value in mSv or mrem."""
    if value is None:
        return None
    return value * MSV_PER_MREM if unit == "mrem" else value


def from_msv(value_msv: float | None, unit: str) -> float | None:
    """A dose in mSv shown in mSv or mrem."""
    if value_msv is None:
        return None
    return value_msv / MSV_PER_MREM if unit == "mrem" else value_msv


def to_usv_h(value: float, unit: str) -> float:
    """A dose-rate reading in the given unit, in uSv/h."""
    try:
        return value * RATE_UNITS[unit].usv_h_per_unit
    except KeyError:
        raise ValueError(f"unknown dose-rate unit {unit!r}; use one of {', '.join(RATE_UNITS)}") from None
