"""A set-up to estimate for: what was read, where and at which settings, and what is planned."""
from __future__ import annotations

from dataclasses import dataclass, field

from models.core.units import to_usv_h
from models.surveys.shielding import CLOSE_CM, MATERIALS, Estimate, estimate, inverse_square
from models.surveys.tables import SurveyPoint

INVERSE_SQUARE_NOTE = (
    "Scaled by the inverse square of the distance from the point read, which holds for a small source "
    "seen from far away; close to an extended source (a housing, a slit, a scattering sample) the real "
    "rate can differ either way. Survey at the new distance.")


@dataclass(frozen=True)
class SetUp:
    """The inputs of one estimate, in the units entered."""

    anode: str
    kv: float
    reading: float
    unit: str = "uSv/h"
    target_usv_h: float = 2.5
    margin: float = 1.0
    materials: tuple[str, ...] = field(default_factory=lambda: tuple(MATERIALS))
    distance_cm: float | None = None  # None when not given: never claimed as a distance
    at_cm: float | None = None
    ma: float | None = None
    planned_ma: float | None = None


@dataclass(frozen=True)
class Result:
    """An estimate with the rate it shields and how that rate was reached."""

    setup: SetUp
    reading_usv_h: float
    rate_usv_h: float
    steps: tuple[str, ...]
    estimate: Estimate
    close: bool


def from_point(point: SurveyPoint) -> SetUp:
    """The set-up of a survey point: its net reading, settings and action level."""
    survey = point.survey
    return SetUp(anode=survey.instrument.anode, kv=survey.kv, reading=point.net_usv_h,
                 target_usv_h=point.action_level_usv_h, distance_cm=point.distance_cm, ma=survey.ma)


def run(setup: SetUp) -> Result:
    """The rate to shield (reading, scaled to the planned current and distance) and the estimate."""
    reading = to_usv_h(setup.reading, setup.unit, setup.kv)
    where = "distance not given" if setup.distance_cm is None else f"read at {setup.distance_cm:g} cm"
    rate, steps = reading, [f"{reading:.3g} µSv/h, {where}"]
    if setup.planned_ma is not None and not setup.ma:
        raise ValueError("a planned tube current needs the current during the reading")
    if setup.planned_ma is not None:
        rate *= setup.planned_ma / setup.ma
        steps.append(f"× {setup.planned_ma:g} / {setup.ma:g} mA (rate in proportion to the tube current)")
    if setup.at_cm is not None:
        if setup.distance_cm is None:
            raise ValueError("another distance needs the distance the reading was taken at")
        rate = inverse_square(rate, setup.distance_cm, setup.at_cm)
        steps.append(f"× ({setup.distance_cm:g} / {setup.at_cm:g} cm)² (inverse square)")
    close = setup.at_cm is not None and min(setup.distance_cm, setup.at_cm) < CLOSE_CM
    result = estimate(setup.anode, setup.kv, rate, setup.target_usv_h, setup.margin, setup.materials)
    return Result(setup, reading, rate, tuple(steps), result, close)


def over_level_estimates(points: list[SurveyPoint]) -> list[tuple[SurveyPoint, Result | None, str | None]]:
    """For each point over its level: the estimate, or why there is none (an anode not modelled)."""
    rows = []
    for point in points:
        try:
            rows.append((point, run(from_point(point)), None))
        except ValueError as error:
            rows.append((point, None, str(error)))
    return rows


def as_dict(result: Result) -> dict:
    """The result for scripts: thicknesses in mm, null where beyond 10 m of the material."""
    e = result.estimate

    def mm(value: float) -> float | None:
        """A thickness rounded for output; None where none is enough."""
        return None if value == float("inf") else round(value, 4)

    return {
        "anode": e.anode, "kv": e.kv, "reading_usv_h": round(result.reading_usv_h, 6),
        "rate_to_shield_usv_h": round(result.rate_usv_h, 6), "how": list(result.steps),
        "target_usv_h": e.target_usv_h, "margin": e.margin, "reduction": round(e.reduction, 6),
        "materials": [{"key": r.material.key, "label": r.material.label, "data": r.material.note,
                       "hvl_mm": mm(r.hvl_mm), "tvl_mm": mm(r.tvl_mm), "added_mm": mm(r.added_mm)}
                      for r in e.rows],
        "inverse_square": INVERSE_SQUARE_NOTE if result.setup.at_cm is not None else None,
        "assumptions": list(e.assumptions), "caution": e.caution,
    }
