"""A modelled X-ray tube spectrum: Kramers' bremsstrahlung, the anode's K lines, the window's filtration.

The model serves shielding estimates, not spectroscopy: photon numbers are relative (per electron, up
to a constant), on a grid of 0.1 keV bins from 1 keV to the kVp.

- Bremsstrahlung: Kramers (1923), photons per unit energy dN/dE proportional to Z (E0 - E) / E.
- K lines: the anode's K-alpha1, K-alpha2 and K-beta1 at the energies of `tube.anode_lines`, split in
  the ratio of xraydb's line intensities, only when the kVp exceeds the K edge. Their strength against
  the continuum is an assumption (`LINE_SHARE`), not a published figure; the shielding estimate is
  worked with and without the lines and keeps the thicker answer, so the assumption cannot make it
  thinner.
- Window: beryllium, `WINDOW_BE_MM` thick (sealed diffraction tubes: common practice).
"""
from __future__ import annotations

from functools import cache
from typing import NamedTuple

import numpy as np
import xraydb

from models.instruments.tube import anode_lines, anode_symbol, k_edge_kev, k_lines_excited

BIN_KEV = 0.1
LOWEST_KEV = 1.0
WINDOW_BE_MM = 0.3
BE_DENSITY = 1.848  # g/cm3, xraydb's value for beryllium metal
# Assumed photon number of the K lines together, as a multiple of the continuum's photons between the
# K edge and the kVp (order of magnitude of measured tube spectra: from memory, not a published value).
LINE_SHARE = 1.0
ELECTRON_REST_KEV = 510.99895

# xraydb line key of each line `tube.anode_lines` reports, in the same order.
_LINE_KEYS = ("Ka1", "Ka2", "Kb1")


class Spectrum(NamedTuple):
    """Photon numbers per bin (relative) at the bin-centre energies, in keV."""

    energy_kev: np.ndarray
    photons: np.ndarray

    def filtered(self, mu_per_cm: np.ndarray, thickness_cm: float) -> Spectrum:
        """The spectrum after a layer with the given linear attenuation coefficients."""
        return Spectrum(self.energy_kev, self.photons * np.exp(-mu_per_cm * thickness_cm))


def energy_grid(kv: float) -> np.ndarray:
    """Bin-centre energies from 1 keV to the kVp, in keV."""
    edges = np.arange(LOWEST_KEV, kv + BIN_KEV / 2, BIN_KEV)
    return (edges[:-1] + edges[1:]) / 2


@cache
def _atomic_number(symbol: str) -> int:
    """The element's atomic number."""
    return xraydb.atomic_number(symbol)


def bremsstrahlung(kv: float, anode: str) -> Spectrum:
    """Kramers' thick-target continuum, photons per bin (relative)."""
    energy = energy_grid(kv)
    return Spectrum(energy, _atomic_number(anode_symbol(anode)) * (kv - energy) / energy * BIN_KEV)


@cache
def _line_weights(symbol: str) -> tuple[float, ...]:
    """Relative intensities of K-alpha1, K-alpha2, K-beta1 (xraydb), summing to 1."""
    lines = xraydb.xray_lines(symbol, "K")
    weights = np.array([lines[key].intensity for key in _LINE_KEYS])
    return tuple(weights / weights.sum())


def with_k_lines(continuum: Spectrum, kv: float, anode: str) -> Spectrum:
    """The continuum plus the anode's K lines, each put into the bin that holds its energy."""
    if not k_lines_excited(kv, anode):
        return continuum
    energy, photons = continuum.energy_kev, continuum.photons.copy()
    total = LINE_SHARE * photons[energy > k_edge_kev(anode)].sum()
    for line, weight in zip(anode_lines(anode), _line_weights(anode_symbol(anode))):
        at = min(int(np.searchsorted(energy + BIN_KEV / 2, line.energy_kev)), len(energy) - 1)
        photons[at] += total * weight
    return Spectrum(energy, photons)


def window_mu_per_cm(energy_kev: np.ndarray) -> np.ndarray:
    """Linear attenuation coefficient of the beryllium window, 1/cm."""
    return xraydb.material_mu("Be", energy_kev * 1000.0, density=BE_DENSITY)


def tube_spectrum(kv: float, anode: str, lines: bool = True) -> Spectrum:
    """The tube's output through its window: continuum, K lines if asked, Be filtration."""
    spectrum = bremsstrahlung(kv, anode)
    if lines:
        spectrum = with_k_lines(spectrum, kv, anode)
    return spectrum.filtered(window_mu_per_cm(spectrum.energy_kev), WINDOW_BE_MM / 10.0)


def compton_transfer_fraction(energy_kev: np.ndarray) -> np.ndarray:
    """Mean share of a photon's energy given to the Compton electron, k / (1 + 2k), k = E / mc2."""
    # A closed-form approximation of the Klein-Nishina mean (0.14 at 100 keV against 0.138 tabulated).
    k = np.asarray(energy_kev) / ELECTRON_REST_KEV
    return k / (1 + 2 * k)


def air_kerma_per_photon(energy_kev: np.ndarray) -> np.ndarray:
    """Air kerma per photon per unit area, relative: E x mu_en/rho of air."""
    energy_ev = np.asarray(energy_kev) * 1000.0
    # Air by mass: 75.5 % N, 23.2 % O, 1.3 % Ar (dry air near sea level).
    parts = (("N", 0.755), ("O", 0.232), ("Ar", 0.013))
    photo = sum(w * xraydb.mu_elam(el, energy_ev, kind="photo") for el, w in parts)
    incoh = sum(w * xraydb.mu_elam(el, energy_ev, kind="incoh") for el, w in parts)
    return energy_kev * (photo + incoh * compton_transfer_fraction(energy_kev))
