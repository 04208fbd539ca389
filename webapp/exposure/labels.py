"""The label tables the exposure pages use, under short names for templates; the tables live in the domain."""
from __future__ import annotations

from models.core.codes import Level
from models.core.labels import LENS_LABELS as LENS
from models.core.labels import LEVEL_KIND_LABELS as LEVEL_KIND
from models.core.labels import LEVEL_LABELS as LEVEL
from models.core.labels import LOCATION_LABELS as LOCATION
from models.core.labels import MRD_LABELS as MRD
from models.core.labels import PERIOD_LABELS as PERIOD
from models.core.labels import PRORATION_LABELS as PRORATION
from models.core.labels import RESULT_LABELS as RESULT
from models.core.labels import SERIES_LABELS as SERIES
from models.doses.tables import SOURCE_LABELS as SOURCE
from models.people.tables import CATEGORY_LABELS as CATEGORY

__all__ = ["CATEGORY", "LENS", "LEVEL", "LEVEL_CSS", "LEVEL_KIND", "LOCATION", "MRD", "PERIOD", "PRORATION",
           "RESULT", "SERIES", "SOURCE"]

LEVEL_CSS = {
    Level.BELOW_1: "state-good",
    Level.LEVEL_1: "state-warn",
    Level.LEVEL_2: "state-bad",
    Level.LIMIT_REACHED: "state-bad",
    "no_limit": "state-warn",
    "no_result": "",  # the plain badge: a monitoring decision, not a warning
}
