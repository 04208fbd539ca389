"""E-mail about the investigations that `review_after_dose_change` raised."""
from __future__ import annotations

from models.core.codes import Level
from models.core.labels import LEVEL_LABELS
from models.exposure.investigation_ops import investigation_label
from models.exposure.tables import Investigation
from webapp.formatting import dose
from webapp.mail import link, send_mail, tell_safety_officer


def tell_about(raised: list[Investigation]) -> None:
    """Queue e-mail about each investigation raised, to the person and the safety officer.

    Call it before the commit: the messages are saved with the investigations and sent after it.

    A message not delivered stays in the outbox and on the safety officer's home page.
    """
    for investigation in raised:
        _tell(investigation)


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
