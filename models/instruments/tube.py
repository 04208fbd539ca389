"""X-ray tube physics: power, energy, short-wavelength limit and the anode's K lines.

Line and edge energies: where a published value is held we show it (Cu and Mo lines as
wavelengths from ITC Vol. C Table 4.2.2.6; Cr, Fe, Co, Ag lines and the K edges of Cr, Fe, Co, Cu,
Mo, Ag from Bearden & Burr), and an anode's three lines always come from one source. Everything
else (Rh and W lines, other edges) comes from xraydb, whose energies
follow Elam et al. and differ from Bearden & Burr by less than 0.05 %. The published values win
because they are the ones textbooks and inspectors quote, and because the Mo K edge (19.9995 keV;
xraydb rounds to 20.000) decides whether a 20 kV setting excites Mo K lines.
"""
from __future__ import annotations

from functools import cache
from typing import NamedTuple

import numpy as np
import xraydb

# International Tables for Crystallography Vol. C 4.2.2.
HC_KEV_ANGSTROM = 12.39841857

SUPPORTED_ANODES = ("Cr", "Fe", "Co", "Cu", "Rh", "Mo", "Ag", "W")

# Display name and xraydb's (Siegbahn) key of each line we report.
_LINE_KEYS = (("K-alpha1", "Ka1"), ("K-alpha2", "Ka2"), ("K-beta1", "Kb1"))


class Line(NamedTuple):
    """One characteristic emission line of an anode."""

    name: str
    energy_kev: float
    wavelength_angstrom: float

    @classmethod
    def from_energy(cls, name: str, energy_kev: float) -> Line:
        """Build a line from its energy; the wavelength follows from hc."""
        return cls(name, energy_kev, HC_KEV_ANGSTROM / energy_kev)

    @classmethod
    def from_wavelength(cls, name: str, wavelength_angstrom: float) -> Line:
        """Build a line from its wavelength; the energy follows from hc."""
        return cls(name, HC_KEV_ANGSTROM / wavelength_angstrom, wavelength_angstrom)


def _published(unit: str, values: dict[str, tuple[float, float, float]]) -> dict:
    """K-alpha1, K-alpha2, K-beta1 of each anode from one source, as lines keyed (anode, name)."""
    build = Line.from_wavelength if unit == "angstrom" else Line.from_energy
    return {(symbol, name): build(name, value)
            for symbol, triple in values.items()
            for (name, _), value in zip(_LINE_KEYS, triple)}


# All three lines of an anode come from one source, so their spacings are consistent.
_PUBLISHED_LINES = {
    # ITC Vol. C Table 4.2.2.6 publishes these as wavelengths (K-alpha1 in REFERENCE.md; K-alpha2
    # and K-beta1 from memory, checked against xraydb within 0.05 %).
    **_published("angstrom", {
        "Cu": (1.54059292, 1.54442740, 1.3922340),
        "Mo": (0.70931713, 0.713607, 0.632303),
    }),
    # Bearden & Burr, keV (as tabulated in xraylib's data files and the X-ray Data Booklet Table
    # 1-2; K-alpha1 in REFERENCE.md, K-alpha2 and K-beta1 from memory, checked against xraydb).
    **_published("kev", {
        "Cr": (5.4147, 5.40551, 5.94671),
        "Fe": (6.4039, 6.39084, 7.05798),
        "Co": (6.9303, 6.91530, 7.64943),
        "Ag": (22.1629, 21.9903, 24.9424),
    }),
}

# Bearden & Burr K absorption edges, keV.
_PUBLISHED_K_EDGES_KEV = {
    "Cr": 5.9892,
    "Fe": 7.1120,
    "Co": 7.7089,
    "Cu": 8.9789,
    "Mo": 19.9995,
    "Ag": 25.5140,
}


def _settings(kv, ma, minutes=0.0) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Return kV, mA and beam-on minutes as float arrays, refusing impossible values."""
    kv, ma, minutes = (np.asarray(x, dtype=float) for x in (kv, ma, minutes))
    # Written as "not (x > 0)" so that NaN is refused too.
    if np.any(~(kv > 0)):
        raise ValueError(f"tube voltage must be above 0 kV, got {kv[~(kv > 0)].flat[0]:g} kV")
    if np.any(~(ma >= 0)):
        raise ValueError(f"tube current cannot be negative, got {ma[~(ma >= 0)].flat[0]:g} mA")
    if np.any(~(minutes >= 0)):
        bad = minutes[~(minutes >= 0)].flat[0]
        raise ValueError(f"beam-on time cannot be negative, got {bad:g} min")
    return kv, ma, minutes


def anode_symbol(element: str) -> str:
    """Return the anode's element symbol in canonical case, or refuse an unsupported one."""
    symbol = str(element).strip().capitalize()
    if symbol not in SUPPORTED_ANODES:
        raise ValueError(
            f"unknown anode element {element!r}; supported: {', '.join(SUPPORTED_ANODES)}"
        )
    return symbol


def power_w(kv: float, ma: float) -> float:
    """Electrical power of the tube in watts."""
    kv, ma, _ = _settings(kv, ma)
    # kV x mA is W: the factors 1e3 and 1e-3 cancel.
    return float(kv * ma)


def tube_usage(kv, ma, beam_on_minutes) -> tuple[float, float]:
    """Total beam hours and kWh over many sessions given as arrays (or scalars)."""
    kv, ma, minutes = _settings(kv, ma, beam_on_minutes)
    hours = minutes / 60.0
    return float(hours.sum()), float((kv * ma * hours).sum() / 1000.0)


def energy_kwh(kv: float, ma: float, beam_on_minutes: float) -> float:
    """Electrical energy drawn by the tube during one session, in kWh."""
    return tube_usage(kv, ma, beam_on_minutes)[1]


def max_photon_energy_kev(kv: float) -> float:
    """Highest photon energy in the spectrum, in keV (equal to the kVp)."""
    kv, _, _ = _settings(kv, 0.0)
    # An electron accelerated through V kilovolts carries at most V keV into one photon.
    return float(kv)


def duane_hunt_min_wavelength_angstrom(kv: float) -> float:
    """Short-wavelength limit of the bremsstrahlung (Duane-Hunt), in Angstrom."""
    return HC_KEV_ANGSTROM / max_photon_energy_kev(kv)


@cache
def _lines(symbol: str) -> tuple[Line, ...]:
    """K-alpha1, K-alpha2 and K-beta1 of a supported anode: all published, or all from xraydb."""
    if (symbol, "K-alpha1") in _PUBLISHED_LINES:
        return tuple(_PUBLISHED_LINES[symbol, name] for name, _ in _LINE_KEYS)
    # Cached because xraydb reads its database on every call and lists ask for the same anodes.
    xray = xraydb.xray_lines(symbol)
    return tuple(Line.from_energy(name, xray[key].energy / 1000.0) for name, key in _LINE_KEYS)


def anode_lines(element: str) -> tuple[Line, ...]:
    """The anode's K-alpha1, K-alpha2 and K-beta1 lines (name, keV, Angstrom)."""
    return _lines(anode_symbol(element))


@cache
def _edge_kev(symbol: str, edge: str) -> float:
    """Absorption edge energy from xraydb, in keV."""
    return xraydb.xray_edge(symbol, edge).energy / 1000.0


def k_edge_kev(element: str) -> float:
    """K absorption edge of the anode element, in keV."""
    symbol = anode_symbol(element)
    return _PUBLISHED_K_EDGES_KEV.get(symbol) or _edge_kev(symbol, "K")


def l3_edge_kev(element: str) -> float:
    """L3 absorption edge of the anode element, in keV (what a W tube below 69.5 kV excites)."""
    return _edge_kev(anode_symbol(element), "L3")


def k_lines_excited(kv: float, element: str) -> bool:
    """Whether the tube voltage is high enough to produce the anode's K lines."""
    # Strictly above: exactly at the edge the K-shell ionisation cross-section is zero.
    return max_photon_energy_kev(kv) > k_edge_kev(element)


def k_lines_note(kv: float, element: str) -> str | None:
    """A short session note when the anode's K lines are not excited, else None."""
    if k_lines_excited(kv, element):
        return None
    symbol = anode_symbol(element)
    return (
        f"{kv:g} kV does not exceed the {symbol} K edge ({k_edge_kev(symbol):g} keV): "
        f"no {symbol} K lines"
    )
