"""After dose records change: raise investigations for new crossings, ask for surveys, send e-mail."""
from __future__ import annotations

from datetime import date

from models.core.codes import Level
from models.core.labels import LEVEL_LABELS
from models.exposure.investigation_ops import investigation_label, raise_investigations, raise_survey_tasks
from models.exposure.lab_ops import cached_lab_evaluation
from models.exposure.tables import Investigation
from webapp.extensions import db
from webapp.formatting import dose, lab_today, lab_zone
from webapp.mail import deliver_queued, link, send_mail, tell_safety_officer


def review_dose_levels(on: date | None = None) -> list[Investigation]:
    """Evaluate the lab on `on` (default today), commit new investigations with their e-mail, send it.

    Dose entry and import call this after committing their records; `flask exposure review`
    runs it from cron so crossings that only a date change reveals are raised too.
    """
    on = on or lab_today()
    lab = cached_lab_evaluation(db.session, on)
    new = raise_investigations(db.session, lab)
    raise_survey_tasks(db.session, new, on, lab_zone())
    for investigation in new:
        _tell(investigation)
    db.session.commit()
    deliver_queued()
    return new


def _tell(investigation: Investigation) -> None:
    """Queue one message to the person, one to the safety officer."""
    what = investigation_label(investigation)
    figure = dose(investigation.dose_msv)
    person = investigation.person
    send_mail([person.email or ""], f"Your recorded dose reached {LEVEL_LABELS[Level(investigation.level)]}",
              f"Your recorded dose reached an investigation level or limit:\n\n"
              f"  {what}: {figure}\n\n"
              f"The radiation safety officer has been told and will review it with you.")
    address = link("exposure.investigation", investigation_id=investigation.id)
    tell_safety_officer(f"Investigation needed: {person.name}",
                        f"{person.name}'s recorded dose reached an investigation level or limit:"
                        f"\n\n  {what}: {figure}\n\nRecord the review and sign it off at {address}")
