"""Changes written outside the ORM, noted so that what is derived from them follows in the same transaction."""
from __future__ import annotations

from collections.abc import Iterable

from sqlalchemy.orm import Session

# session.info key: ids of the people whose dose inputs this transaction changed.
DOSE_INPUTS_CHANGED = "dose_inputs_changed"


def mark_dose_inputs_changed(session: Session, person_ids: Iterable[int]) -> None:
    """Note people whose dose records were written by a bulk (Core) insert, which no ORM event
    sees, so that their stored evaluation is brought up to date before the commit."""
    session.info.setdefault(DOSE_INPUTS_CHANGED, set()).update(int(i) for i in person_ids)
