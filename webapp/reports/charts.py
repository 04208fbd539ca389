"""Charts of the lab's year as PNG (for the page and the PDF), drawn with matplotlib's object API."""
from __future__ import annotations

import io

import matplotlib
from matplotlib.figure import Figure

from models.reports.year_ops import BAND_NAMES, LabYear
from webapp.exposure.chart import BAR, INK, STYLE


def _png(figure: Figure) -> bytes:
    buffer = io.BytesIO()
    figure.savefig(buffer, format="png", dpi=110)
    return buffer.getvalue()


def bands_png(year: LabYear) -> bytes:
    """People per band of annual Hp(10)."""
    with matplotlib.rc_context(STYLE):
        figure = Figure(figsize=(7.5, 2.8), layout="constrained")
        axes = figure.add_subplot()
        positions = range(len(BAND_NAMES))
        axes.bar(positions, year.bands, color=BAR)
        axes.set_xticks(list(positions), [n.replace(" the minimum", "\nthe minimum") for n in BAND_NAMES],
                        fontsize=8)
        axes.set_ylabel("people")
        axes.set_title(f"Annual Hp(10), {year.year}: people per band", color=INK, fontsize=10)
        axes.yaxis.get_major_locator().set_params(integer=True)
        return _png(figure)


def beam_hours_png(year: LabYear) -> bytes:
    """Beam hours per instrument."""
    with matplotlib.rc_context(STYLE):
        figure = Figure(figsize=(7.5, 0.6 + 0.35 * max(len(year.instruments), 1)), layout="constrained")
        axes = figure.add_subplot()
        names = [i.name for i in year.instruments]
        axes.barh(range(len(names)), [i.beam_hours for i in year.instruments], color=BAR)
        axes.set_yticks(range(len(names)), names, fontsize=8)
        axes.invert_yaxis()
        axes.set_xlabel("beam hours (ended sessions)")
        axes.set_title(f"Tube use per instrument, {year.year}", color=INK, fontsize=10)
        return _png(figure)
