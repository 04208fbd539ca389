"""`flask shielding estimate`: what it would take, for scripts and the safety officer's terminal."""
from __future__ import annotations

import json
import math

import click

from models.core.units import RATE_UNITS
from models.instruments.tube import SUPPORTED_ANODES
from models.surveys.shielding import MATERIALS, MAX_KV, MIN_KV
from models.surveys.tables import SurveyPoint
from webapp.extensions import db
from webapp.shielding import bp
from webapp.shielding.setup import INVERSE_SQUARE_NOTE, SetUp, as_dict, from_point, run


@bp.cli.command("estimate")
@click.option("--point", "point_id", type=int, help="A survey point's id: its net reading, settings and level.")
@click.option("--anode", type=click.Choice(SUPPORTED_ANODES, case_sensitive=False))
@click.option("--kv", type=click.FloatRange(MIN_KV, MAX_KV), help="Tube voltage, kV.")
@click.option("--reading", type=click.FloatRange(0), help="Net reading at the point.")
@click.option("--unit", type=click.Choice(list(RATE_UNITS)), default="uSv/h", show_default=True)
@click.option("--target", type=click.FloatRange(0, min_open=True), help="Target, µSv/h (a survey point: its level).")
@click.option("--margin", type=click.FloatRange(1, 1000), default=1.0, show_default=True,
              help="Aim at the target divided by this.")
@click.option("--material", "materials", multiple=True, type=click.Choice(list(MATERIALS)),
              help="Repeat for several; all when left out.")
@click.option("--distance", type=click.FloatRange(0, min_open=True), help="Where the reading was taken, cm.")
@click.option("--at", "at_cm", type=click.FloatRange(0, min_open=True), help="Another distance, cm (inverse square).")
@click.option("--ma", type=click.FloatRange(0, min_open=True), help="Tube current during the reading, mA.")
@click.option("--planned-ma", type=click.FloatRange(0, min_open=True), help="Planned tube current, mA.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of a table.")
def estimate(point_id, anode, kv, reading, unit, target, margin, materials, distance, at_cm, ma,
             planned_ma, as_json):
    """Added thickness per material bringing a net reading to a target, with HVL and TVL."""
    setup = _setup(point_id, anode, kv, reading, unit, target, margin, materials, distance, at_cm, ma,
                   planned_ma)
    try:
        result = run(setup)
    except ValueError as error:
        raise click.UsageError(str(error)) from None
    if as_json:
        click.echo(json.dumps(as_dict(result), indent=2))
        return
    e = result.estimate
    aim = f"{e.target_usv_h:g} µSv/h" + (f" ÷ margin {e.margin:g}" if e.margin > 1 else "")
    cut = f"a {e.reduction:.3g}-fold cut" if e.reduction > 1 else "already there: nothing to add"
    click.echo(f"{e.anode} anode at {e.kv:g} kV: {result.rate_usv_h:.3g} µSv/h to bring to {aim} ({cut})")
    for step in result.steps:
        click.echo(f"  {step}")
    click.echo(f"{'material':<18}{'HVL mm':>10}{'TVL mm':>10}{'add mm':>12}")
    for r in e.rows:
        added = "beyond 10 m" if math.isinf(r.added_mm) else f"{r.added_mm:.3g}"
        click.echo(f"{r.material.label:<18}{r.hvl_mm:>10.3g}{r.tvl_mm:>10.3g}{added:>12}")
    if setup.at_cm is not None:
        click.echo(f"Distance: {INVERSE_SQUARE_NOTE}")
    click.echo("Assumptions:")
    for line in e.assumptions:
        click.echo(f"  - {line}")
    click.echo(f"CAUTION: {e.caution}")


def _setup(point_id, anode, kv, reading, unit, target, margin, materials, distance, at_cm, ma,
           planned_ma) -> SetUp:
    """The set-up from a survey point or the options; an option given overrides the point."""
    if point_id is not None:
        point = db.session.get(SurveyPoint, point_id)
        if point is None:
            raise click.BadParameter(f"no survey point {point_id}", param_hint="--point")
        base = from_point(point)
    else:
        for name, value in (("--anode", anode), ("--kv", kv), ("--reading", reading), ("--target", target)):
            if value is None:
                raise click.BadParameter("required without --point", param_hint=name)
        # Scaling to another distance from an assumed one would fail open: ask where it was read.
        if at_cm is not None and distance is None:
            raise click.BadParameter("required with --at: where the reading was taken", param_hint="--distance")
        base = SetUp(anode=anode, kv=kv, reading=reading, target_usv_h=target)
    given = {"anode": anode, "kv": kv, "reading": reading, "target_usv_h": target, "distance_cm": distance,
             "ma": ma}
    values = {**base.__dict__, **{k: v for k, v in given.items() if v is not None}}
    return SetUp(**{**values, "unit": unit if point_id is None or reading is not None else "uSv/h",
                    "margin": margin, "materials": tuple(materials) or base.materials, "at_cm": at_cm,
                    "planned_ma": planned_ma})
