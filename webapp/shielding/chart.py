"""Transmission against added thickness, one small panel per material, as SVG (matplotlib object API)."""
from __future__ import annotations

import io
import math

import matplotlib
import numpy as np
from matplotlib.figure import Figure

from models.surveys.shielding import Estimate, beam_transmission
from webapp.exposure.chart import INK, LIMIT, STYLE, TOTAL

COLUMNS = 4


def transmission_chart_svg(estimate: Estimate) -> bytes:
    """Each material's dose transmission (log scale) over thickness, the target's fraction dashed."""
    rows = estimate.rows
    target = 1.0 / estimate.reduction if estimate.reduction > 1 else None
    with matplotlib.rc_context({**STYLE, "svg.hashsalt": "shielding-chart"}):
        n_rows = math.ceil(len(rows) / COLUMNS)
        figure = Figure(figsize=(2.6 * min(len(rows), COLUMNS), 2.4 * n_rows), layout="constrained")
        axes_list = np.atleast_1d(figure.subplots(n_rows, min(len(rows), COLUMNS), squeeze=False)).ravel()
        for axes, row in zip(axes_list, rows):
            # Out to three TVLs or past the added thickness, whichever is further.
            reach = row.tvl_mm * 3 if math.isinf(row.added_mm) else max(row.tvl_mm * 3, row.added_mm * 1.3)
            x_mm = np.linspace(0, reach, 120)
            axes.plot(x_mm, beam_transmission(estimate.kv, estimate.anode, row.material.key, x_mm / 10),
                      color=TOTAL, linewidth=1.8)
            if target is not None:
                axes.axhline(target, color=LIMIT, linestyle="--", linewidth=1.2)
            axes.set_yscale("log")
            axes.set_ylim(top=1.2)
            axes.set_title(row.material.label, loc="left", fontsize=9, color=INK)
            axes.set_xlabel("added thickness (mm)", fontsize=8)
            axes.spines[["top", "right"]].set_visible(False)
            axes.grid(color="#e3e7eb", linewidth=0.6)
        for axes in axes_list[len(rows):]:
            axes.set_visible(False)
        axes_list[0].set_ylabel("dose transmitted", fontsize=8)
        buffer = io.BytesIO()
        figure.savefig(buffer, format="svg", metadata={"Date": None})
    return buffer.getvalue()


def no_chart_svg(text: str) -> bytes:
    """A small SVG that says, in words, why there is no chart."""
    with matplotlib.rc_context({**STYLE, "svg.hashsalt": "shielding-chart"}):
        figure = Figure(figsize=(6, 0.6))
        figure.text(0.01, 0.5, text, va="center", color=LIMIT, fontsize=10)
        buffer = io.BytesIO()
        figure.savefig(buffer, format="svg", metadata={"Date": None})
    return buffer.getvalue()
