"""The exposure chart, kept per server process by person, date and a digest of its inputs.

The digest is taken over the inputs' content (the person's records and declarations, their
category, the rules and the display unit), never over ids or counters, which a rolled-back write
can hand out again.
"""
from __future__ import annotations

import hashlib
import threading
from collections import OrderedDict
from collections.abc import Callable
from datetime import date

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.settings import lab_settings
from models.doses.tables import DoseRecord
from models.doses.version_ops import is_current
from models.exposure.figures_ops import rules_marker
from models.exposure.rules_ops import rules_on
from models.exposure.tables import PregnancyDeclaration
from models.people.tables import Person

KEPT = 256


def chart_version(session: Session, person_id: int, on: date) -> str:
    """A digest of everything a person's chart on `on` is drawn from: it changes with any of it."""
    settings = lab_settings(session)
    records = session.execute(
        sa.select(DoseRecord.id, DoseRecord.quantity, DoseRecord.location, DoseRecord.wear_start,
                  DoseRecord.wear_end, DoseRecord.value_msv, DoseRecord.result, DoseRecord.mrd_msv,
                  is_current()).where(DoseRecord.person_id == person_id).order_by(DoseRecord.id)).all()
    declarations = session.execute(
        sa.select(PregnancyDeclaration.declared_on, PregnancyDeclaration.conception_on,
                  PregnancyDeclaration.expected_end_on, PregnancyDeclaration.ended_on)
        .where(PregnancyDeclaration.person_id == person_id).order_by(PregnancyDeclaration.id)).all()
    category = session.scalar(sa.select(Person.category).where(Person.id == person_id))
    inputs = (rules_marker(*rules_on(session, on)), settings.display_unit,
              category, records, declarations)
    return hashlib.sha256(repr(inputs).encode()).hexdigest()[:32]


class ChartCache:
    """A small least-recently-used store of drawn charts, keyed by (person, date, version)."""

    def __init__(self, size: int = KEPT) -> None:
        self.size = size
        self._charts: OrderedDict[tuple[int, date, str], str] = OrderedDict()
        self._lock = threading.Lock()

    def get(self, key: tuple[int, date, str], draw: Callable[[], str]) -> str:
        """The chart under `key`, drawn (and kept) when not kept yet."""
        with self._lock:
            if key in self._charts:
                self._charts.move_to_end(key)
                return self._charts[key]
        svg = draw()
        with self._lock:
            self._charts[key] = svg
            while len(self._charts) > self.size:
                self._charts.popitem(last=False)
        return svg

    def clear(self) -> None:
        """Forget every kept chart."""
        with self._lock:
            self._charts.clear()


charts = ChartCache()
