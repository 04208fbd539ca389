"""Shielding and dose-rate estimates from the tube's modelled spectrum: what would it take.

For planning and for a conversation with the radiation safety officer, never a shielding design.
The model is narrow-beam: exponential attenuation per energy with xraydb's total mass attenuation
coefficients, weighted by ambient dose equivalent. Broad-beam build-up, scatter paths, gaps and
penetrations are not modelled; `ASSUMPTIONS` says so wherever a figure is shown.

The radiation at a survey point has already come through the enclosure, so it is harder than the
tube's output. The estimate takes it as hardened by `HARDENING` (the same material already cut the
dose rate by that factor) before the added layer starts: a harder beam needs more shielding for the
same reduction, so this errs thick against a leak through a gap, which would be softer. A million-fold
is the order between a diffractometer's direct beam and a survey reading outside its enclosure
(common practice); with it the lead half-value layers come out at or above the broad-beam handbook
values at 50 and 100 kV and within a few per cent below at 70 kV, and the steel ones 2 to 9 % below
the broad-beam values of NCRP Report No. 147, the build-up being left out (tests/models/surveys/test_shielding.py).
"""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import xraydb

from models.core.units import H10_PER_KA
from models.instruments.spectrum import Spectrum, air_kerma_per_photon, energy_grid, tube_spectrum
from models.instruments.tube import anode_symbol


@dataclass(frozen=True)
class Material:
    """A shielding material: what xraydb calls it (element, named material or formula) and its density."""

    key: str
    label: str
    xraydb_name: str
    density: float  # g/cm3
    note: str


MATERIALS = {m.key: m for m in (
    Material("Pb", "Lead", "Pb", 11.35, "11.35 g/cm³ (NIST)"),
    Material("Fe", "Steel (as iron)", "Fe", 7.85, "iron at 7.85 g/cm³; alloying elements ignored"),
    Material("Al", "Aluminium", "Al", 2.70, "2.70 g/cm³"),
    Material("Cu", "Copper", "Cu", 8.96, "8.96 g/cm³"),
    Material("brass", "Brass", "Cu0.64Zn0.36", 8.47, "64 % Cu, 36 % Zn by atoms, 8.47 g/cm³ (common practice)"),
    # 70 % PbO, 30 % SiO2 by mass as atoms per 100 g: 0.3136 PbO, 0.4993 SiO2 (from memory; the glass
    # maker's lead equivalent overrides this).
    Material("leadglass", "Lead glass", "Pb0.3136Si0.4993O1.3122", 4.8,
             "70 % PbO by mass, 4.8 g/cm³ (from memory; use the maker's lead equivalent)"),
    Material("PMMA", "PMMA (acrylic)", "C5H8O2", 1.18, "C5H8O2, 1.18 g/cm³ (xraydb)"),
    Material("PC", "Polycarbonate", "C16H14O3", 1.20, "C16H14O3, 1.20 g/cm³ (xraydb)"),
)}

# The model's range: below 5 kV the window leaves almost nothing; analytical tubes stay below 160 kV.
MIN_KV, MAX_KV = 5.0, 160.0
HARDENING = 1e6
MAX_THICKNESS_CM = 1000.0
CLOSE_CM = 30.0

ASSUMPTIONS = (
    "Tube spectrum modelled: Kramers' bremsstrahlung, the anode's K lines, 0.3 mm beryllium window; "
    "worked with and without the K lines, the thicker answer kept.",
    "The radiation at the point is taken as already hardened (cut a million-fold by the same "
    "material); a softer leak would need less, so this errs thick.",
    "Narrow-beam attenuation (xraydb mass attenuation coefficients); broad-beam build-up, scatter "
    "paths, gaps, joints and penetrations are not modelled.",
    "Dose weighted as ambient dose equivalent H*(10) per photon (air kerma x ICRU 57 H*(10)/Ka).",
    "Readings are scaled by tube current in proportion; other tube voltages need a new survey.",
)
CAUTION = (
    "Estimates for planning and for a conversation with the radiation safety officer, not a shielding "
    "design. Any added shielding is followed by a survey. Local rules and a qualified expert decide."
)


def h10_per_ka(energy_kev: np.ndarray) -> np.ndarray:
    """H*(10)/Ka at each energy, interpolated in the ICRU 57 table (flat beyond its ends)."""
    energies, coefficients = np.array(H10_PER_KA).T
    return np.interp(energy_kev, energies, coefficients)


def dose_weights(spectrum: Spectrum) -> np.ndarray:
    """Each bin's share of the ambient dose equivalent (relative)."""
    energy = spectrum.energy_kev
    return spectrum.photons * air_kerma_per_photon(energy) * h10_per_ka(energy)


@lru_cache(maxsize=256)
def _tube_weights(kv: float, anode: str, lines: bool) -> np.ndarray:
    """Dose weights of the tube's output; cached because xraydb is slow to ask."""
    return dose_weights(tube_spectrum(kv, anode, lines=lines))


def mass_attenuation(key: str, energy_kev) -> np.ndarray:
    """Total mass attenuation coefficient mu/rho of a material (xraydb), cm2/g."""
    m = material(key)
    return xraydb.material_mu(m.xraydb_name, np.asarray(energy_kev) * 1000.0, density=m.density) / m.density


@lru_cache(maxsize=256)
def _mu_cached(key: str, kv: float) -> np.ndarray:
    """Linear attenuation coefficients of a material on the grid of a kV's spectrum, 1/cm."""
    return mass_attenuation(key, energy_grid(kv)) * MATERIALS[key].density


def material(key: str) -> Material:
    """The material of a key, or a refusal naming the keys."""
    try:
        return MATERIALS[key]
    except KeyError:
        raise ValueError(f"unknown material {key!r}; use one of {', '.join(MATERIALS)}") from None


def mu_per_cm(key: str, kv: float) -> np.ndarray:
    """The material's linear attenuation coefficients on the grid of a kV's spectrum, 1/cm."""
    material(key)
    return _mu_cached(key, float(kv))


def transmission(weights: np.ndarray, mu: np.ndarray, thickness_cm) -> np.ndarray:
    """Dose fraction transmitted through each thickness (cm) of a layer."""
    x = np.atleast_1d(np.asarray(thickness_cm, dtype=float))
    if np.any(~(x >= 0)):
        raise ValueError("a thickness cannot be negative")
    return np.exp(-np.outer(x, mu)) @ weights / weights.sum()


def _solve(transmit: Callable[[float], float], fraction: float) -> float:
    """The thickness (cm) at which a falling transmission reaches `fraction`; 0 when fraction >= 1."""
    if fraction >= 1:
        return 0.0
    if not fraction > 0:
        raise ValueError("the fraction to reach must be above zero")
    low, high = 0.0, MAX_THICKNESS_CM
    if transmit(high) > fraction:
        return float("inf")
    # Transmission falls strictly with thickness: 50 halvings of 10 m end well below a micrometre.
    for _ in range(50):
        middle = (low + high) / 2
        low, high = (middle, high) if transmit(middle) > fraction else (low, middle)
    return high


def thickness_for(weights: np.ndarray, mu: np.ndarray, fraction: float) -> float:
    """The thickness (cm) whose transmitted dose fraction is `fraction`; 0 when fraction >= 1."""
    return _solve(lambda x: transmission(weights, mu, x)[0], fraction)


def hardened_weights(kv: float, anode: str, key: str, lines: bool = True,
                     hardening: float = HARDENING) -> np.ndarray:
    """Dose weights of the beam after the same material has cut it `hardening`-fold."""
    material(key)
    return _hardened(float(kv), anode_symbol(anode), key, lines, float(hardening))


@lru_cache(maxsize=256)
def _hardened(kv: float, anode: str, key: str, lines: bool, hardening: float) -> np.ndarray:
    """hardened_weights, cached: every thickness asked for starts from the same hardened beam."""
    weights, mu = _tube_weights(kv, anode, lines), mu_per_cm(key, kv)
    depth = thickness_for(weights, mu, 1.0 / hardening)
    return weights * np.exp(-mu * depth)


def beam_transmission(kv: float, anode: str, key: str, thickness_cm) -> np.ndarray:
    """Dose fraction of the hardened beam through added thicknesses: the larger of with and without
    the K lines, whose strength is only assumed."""
    mu = mu_per_cm(key, kv)
    return np.maximum(*(transmission(hardened_weights(kv, anode, key, lines), mu, thickness_cm)
                        for lines in (True, False)))


def added_thickness_cm(kv: float, anode: str, key: str, reduction: float) -> float:
    """Added thickness (cm) that cuts the hardened beam's dose rate `reduction`-fold."""
    if reduction <= 1:
        return 0.0
    return _solve(lambda x: beam_transmission(kv, anode, key, x)[0], 1.0 / reduction)


def value_layers_cm(kv: float, anode: str, key: str) -> tuple[float, float]:
    """Half- and tenth-value layers (cm) of the hardened beam in a material."""
    return added_thickness_cm(kv, anode, key, 2.0), added_thickness_cm(kv, anode, key, 10.0)


def inverse_square(rate: float, from_cm: float, to_cm: float) -> float:
    """Dose rate at another distance from a point source: rate x (from / to)^2."""
    if not (from_cm > 0 and to_cm > 0):
        raise ValueError("distances must be above 0 cm")
    return rate * (from_cm / to_cm) ** 2


@dataclass(frozen=True)
class MaterialRow:
    """One material's figures for the beam in question."""

    material: Material
    hvl_mm: float
    tvl_mm: float
    added_mm: float  # inf: beyond MAX_THICKNESS_CM


@dataclass(frozen=True)
class Estimate:
    """What it would take to bring a net reading to a target, per material."""

    anode: str
    kv: float
    reading_usv_h: float
    target_usv_h: float
    margin: float
    reduction: float
    rows: tuple[MaterialRow, ...]
    assumptions: tuple[str, ...] = ASSUMPTIONS
    caution: str = CAUTION


def estimate(anode: str, kv: float, reading_usv_h: float, target_usv_h: float, margin: float = 1.0,
             keys: tuple[str, ...] | None = None) -> Estimate:
    """Per material: HVL, TVL and the added thickness bringing the reading to target / margin."""
    if not MIN_KV <= kv <= MAX_KV:
        raise ValueError(f"tube voltage must be between {MIN_KV:g} and {MAX_KV:g} kV")
    if not reading_usv_h >= 0:
        raise ValueError("the reading cannot be negative")
    if not target_usv_h > 0:
        raise ValueError("the target must be above zero")
    if not 1 <= margin <= 1000:
        raise ValueError("the margin must be between 1 and 1000")
    keys = tuple(keys or MATERIALS)
    for key in keys:
        material(key)
    reduction = reading_usv_h * margin / target_usv_h
    rows = tuple(MaterialRow(MATERIALS[k], *(10 * x for x in value_layers_cm(kv, anode, k)),
                             10 * added_thickness_cm(kv, anode, k, reduction)) for k in keys)
    return Estimate(anode, kv, reading_usv_h, target_usv_h, margin, reduction, rows)
