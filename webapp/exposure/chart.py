"""The monthly dose chart as SVG, drawn with matplotlib's object API (no pyplot, no GUI backend)."""
from __future__ import annotations

import io

import matplotlib
import numpy as np
from matplotlib.figure import Figure

from models.exposure.chart import MonthlyDose

INK, MUTED, BAR, TOTAL, LIMIT = "#1d232b", "#5b6570", "#7fa6c9", "#24303c", "#b3261e"
STYLE = {
    "font.size": 10,
    "axes.edgecolor": MUTED,
    "axes.labelcolor": INK,
    "xtick.color": MUTED,
    "ytick.color": MUTED,
    # Text stays text in the SVG: sharp at any zoom, searchable, and smaller.
    "svg.fonttype": "none",
    "svg.hashsalt": "dose-chart",
}


def _month_labels(months) -> list[str]:
    """'Jan 2026' on Januaries (and on the first month, unless a January follows at once);
    every other month's short name between."""
    def label(i, month):
        """One tick's text."""
        if month.month == 1 or (i == 0 and month.month != 12):
            return month.strftime("%b %Y")
        return month.strftime("%b") if month.month % 2 else ""

    return [label(i, m) for i, m in enumerate(months)]


def monthly_chart_svg(data: MonthlyDose, annual_limit_msv: float | None, unit: str,
                      per_msv: float, title: str) -> bytes:
    """Bars of monthly dose above; the calendar year's running total against the annual limit
    below. Two panels, so small monthly bars stay readable next to a large annual limit."""
    x = np.arange(len(data.months))
    with matplotlib.rc_context(STYLE):
        figure = Figure(figsize=(9.6, 5.2), layout="constrained")
        monthly, yearly = figure.subplots(2, 1, sharex=True, height_ratios=(1, 1.25))
        monthly.bar(x, data.dose * per_msv, width=0.7, color=BAR, label="Dose in the month")
        for i in np.flatnonzero(data.missing):
            monthly.annotate(f"{data.missing[i]} missing", (x[i], 0), xytext=(0, 3),
                             textcoords="offset points", ha="center", fontsize=7, color=LIMIT,
                             rotation=90, va="bottom")
        monthly.set_ylabel(f"Monthly dose ({unit})")
        monthly.set_title(title, loc="left", fontsize=11, color=INK)

        # The running total restarts each January: draw each calendar year as its own line.
        years = np.array([m.year for m in data.months])
        for n, year in enumerate(np.unique(years)):
            at = np.flatnonzero(years == year)
            yearly.plot(x[at], data.year_to_date[at] * per_msv, color=TOTAL, marker="o",
                        markersize=3.5, linewidth=2, label="Calendar-year total" if n == 0 else None)
        top = float(np.nanmax(data.year_to_date, initial=0.0)) * per_msv
        if annual_limit_msv is not None:
            limit = annual_limit_msv * per_msv
            line = yearly.axhline(limit, color=LIMIT, linestyle="--", linewidth=1.6,
                                  label=f"Annual limit {limit:g} {unit}")
            line.set_gid("annual-limit")
            top = max(top, limit)
        # Headroom above the limit line keeps the legend clear of it.
        yearly.set_ylim(0, top * 1.3 if top > 0 else 1)
        yearly.set_ylabel(f"Year to date ({unit})")

        for axes in (monthly, yearly):
            axes.spines[["top", "right"]].set_visible(False)
            axes.grid(axis="y", color="#e3e7eb", linewidth=0.8)
            axes.set_axisbelow(True)
            axes.legend(loc="upper left", frameon=False, fontsize=9)
        if not np.any(data.dose > 0):
            monthly.set_ylim(0, 1)
        monthly.set_ylim(bottom=0)
        yearly.set_xticks(x, _month_labels(data.months), fontsize=8)
        buffer = io.BytesIO()
        figure.savefig(buffer, format="svg", metadata={"Date": None})
    return buffer.getvalue()
