"""The exposure chart, kept per server process by person, date and version of its inputs.

The version is the newest audit event among the chart's inputs, named by its id and its seal: an
id alone can come back after a rolled-back write on SQLite, the seal of a different event cannot.
"""
from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Callable
from datetime import date

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.audit.audit_ops import data_version
from models.audit.tables import AuditEvent

# What a chart is drawn from: the records, the person's category (their limit), the lab's settings
# (display unit), the rules' history (policies and limit set on the chart's date) and the limit sets.
CHART_INPUTS = frozenset({"dose_record", "person", "lab_settings", "rule_change", "limit_set", "limit_rule"})
KEPT = 256


def chart_version(session: Session) -> str:
    """A token that changes whenever an input of any chart is written."""
    newest = data_version(session, CHART_INPUTS)
    seal = session.scalar(sa.select(AuditEvent.hash).where(AuditEvent.id == newest)) if newest else ""
    return f"{newest}-{(seal or '')[:16]}"


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
