"""Dose and dose-rate units accepted on entry, converted to mSv and uSv/h, with their sources."""
from __future__ import annotations

from dataclasses import dataclass

# 1 rem = 0.01 Sv (10 CFR 20.1004), so 1 mrem = 0.01 mSv and 1 mrem/h = 10 uSv/h.
MSV_PER_MREM = 0.01
USV_PER_MREM = 10.0
DOSE_UNITS = ("mSv", "mrem")

# 1 R = 2.58e-4 C/kg (10 CFR 20.1004); with W/e = 33.97 J/C (ICRU) that is about 8.76 mGy air
# kerma, so 1 mR/h is about 8.76 uGy/h air kerma; H*(10) per unit air kerma depends on the energy.
COULOMB_PER_KG_PER_ROENTGEN = 2.58e-4
JOULE_PER_COULOMB_IN_AIR = 33.97
AIR_KERMA_UGY_PER_MR = COULOMB_PER_KG_PER_ROENTGEN * JOULE_PER_COULOMB_IN_AIR * 1e6 / 1e3

# Air kerma to ambient dose equivalent, H*(10)/Ka in Sv/Gy, monoenergetic photons: ICRU Report 57
# Table A.21 (the same values are in ISO 4037-3), as listed in REFERENCE.md ("from memory, to be
# checked against the table").  (keV, Sv/Gy)
H10_PER_KA_SOURCE = "ICRU Report 57 Table A.21 / ISO 4037-3"
H10_PER_KA = ((10.0, 0.008), (15.0, 0.26), (20.0, 0.61), (30.0, 1.10), (40.0, 1.47), (50.0, 1.67),
              (60.0, 1.74), (80.0, 1.72), (100.0, 1.65))
# For the same tube housing at 5 cm, Tennessee 0400-20-06-.07(1)(a) states 2.5 mR in 1 hour and
# 25 Pa. Code 227a.13(b) 2.5 mrem (0.025 mSv): the rules read 1 mR as 10 uSv, so a reading over
# 2.5 mR/h must never pass as under the 25 uSv/h housing level.
RULES_USV_PER_MR = 10.0


def max_h10_per_ka(kv: float) -> float:
    """The largest H*(10)/Ka over photon energies up to the tube voltage, Sv/Gy.

    Taken over the table up to the first tabulated energy at or above the kVp, so an energy between
    two rows never gets less than either neighbour; above the table the peak (60 keV) stands."""
    if not kv > 0:
        raise ValueError(f"tube voltage must be above 0 kV, got {kv!r}")
    reach = next((e for e, _ in H10_PER_KA if e >= kv), H10_PER_KA[-1][0])
    return max(c for e, c in H10_PER_KA if e <= reach)


def usv_h_per_mr(kv: float) -> float:
    """uSv/h H*(10) counted per mR/h at a tube voltage: never below the true value nor the rules' 10."""
    return max(RULES_USV_PER_MR, AIR_KERMA_UGY_PER_MR * max_h10_per_ka(kv))


def mr_source(kv: float) -> str:
    """Where the mR/h factor at a tube voltage comes from, in words."""
    return (f"1 R = 2.58e-4 C/kg (10 CFR 20.1004), {AIR_KERMA_UGY_PER_MR:.2f} mGy air kerma (ICRU); "
            f"times the largest H*(10)/Ka up to {kv:g} keV, {max_h10_per_ka(kv):g} Sv/Gy "
            f"({H10_PER_KA_SOURCE}); never less than the rules' 10 µSv/h per mR/h")


@dataclass(frozen=True)
class RateUnit:
    """A dose-rate unit a meter may read in, with its factor to uSv/h and the factor's source."""

    code: str
    label: str
    usv_h_per_unit: float | None  # None: depends on the tube voltage
    source: str


RATE_UNITS = {
    unit.code: unit for unit in (
        RateUnit("uSv/h", "µSv/h", 1.0, "SI unit, stored as entered"),
        RateUnit("mrem/h", "mrem/h", USV_PER_MREM, "1 rem = 0.01 Sv (10 CFR 20.1004)"),
        # Its factor depends on the tube voltage: usv_h_per_mr.
        RateUnit("mR/h", "mR/h", None, "1 R = 2.58e-4 C/kg (10 CFR 20.1004), 8.76 mGy air kerma (ICRU), "
                 f"times the largest H*(10)/Ka up to the tube voltage ({H10_PER_KA_SOURCE})"),
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


def usv_h_per_unit(unit: str, kv: float) -> float:
    """The factor from a dose-rate unit to uSv/h H*(10) at a tube voltage."""
    try:
        rate_unit = RATE_UNITS[unit]
    except KeyError:
        raise ValueError(f"unknown dose-rate unit {unit!r}; use one of {', '.join(RATE_UNITS)}") from None
    return usv_h_per_mr(kv) if unit == "mR/h" else rate_unit.usv_h_per_unit


def unit_source(unit: str, kv: float) -> str:
    """Where a unit's factor at a tube voltage comes from."""
    return mr_source(kv) if unit == "mR/h" else RATE_UNITS[unit].source


def to_usv_h(value: float, unit: str, kv: float) -> float:
    """A dose-rate reading in the given unit, in uSv/h, for photons from a tube at kv."""
    return value * usv_h_per_unit(unit, kv)
