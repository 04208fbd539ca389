"""`flask surveys status`: what needs doing about meters, permits and surveys, for scripts."""
from __future__ import annotations

import json

import click

from models.surveys.meter_ops import active_meters, calibration_on
from models.surveys.permit_ops import active_permits, expired_unclosed_permits
from models.surveys.survey_ops import open_survey_tasks, shown_reason
from webapp.extensions import db
from webapp.formatting import lab_today, local, settings
from webapp.surveys import bp


@bp.cli.command("status")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of lines.")
def status(as_json):
    """Meters out of calibration or due soon, active and unclosed bypass permits, surveys asked for."""
    today, soon = lab_today(), settings().due_soon_days
    meters = [{"serial": m.serial, "calibration_valid_until": c.last_valid.isoformat(), "state": c.state,
               "usable": c.valid}
              for m in active_meters(db.session) if (c := calibration_on(m, today, soon)).state != "ok"]
    permits = [{"id": p.id, "instrument": p.instrument.name, "devices": p.devices,
                "window_end": local(p.window_end), "state": state}
               for state, found in (("active", active_permits(db.session)),
                                    ("not_closed", expired_unclosed_permits(db.session)))
               for p in found]
    tasks = [{"instrument": t.instrument.name, "trigger": t.trigger.value, "reason": shown_reason(t)}
             for t in open_survey_tasks(db.session)]
    if as_json:
        click.echo(json.dumps({"meters": meters, "permits": permits, "survey_tasks": tasks}, indent=2))
        return
    for m in meters:
        click.echo(f"meter {m['serial']}: calibration {m['state'].replace('_', ' ')} "
                   f"(valid until {m['calibration_valid_until']}, last valid day)")
    for p in permits:
        click.echo(f"bypass permit #{p['id']} {p['state'].replace('_', ' ')}: {p['instrument']} "
                   f"({p['devices']}), window ends {p['window_end']}")
    for t in tasks:
        click.echo(f"survey needed: {t['instrument']}: {t['reason']}")
    if not (meters or permits or tasks):
        click.echo("Nothing needs doing.")
