"""Readable names for the dose codes, shared by the exposure pages, the limit pages and their forms."""
from __future__ import annotations

from models.core.codes import Level, LevelKind, PeriodKind, Series, WorkerCategory
from models.core.labels import LENS_LABELS, LEVEL_LABELS, LOCATION_LABELS, MRD_LABELS, PRORATION_LABELS
from models.people.tables import CATEGORY_LABELS

SERIES = {
    Series.EFFECTIVE: "Whole body, Hp(10)",
    Series.SKIN: "Skin, Hp(0.07)",
    Series.LENS: "Lens of the eye",
    Series.LEFT_HAND: "Left hand, Hp(0.07)",
    Series.RIGHT_HAND: "Right hand, Hp(0.07)",
    Series.WORST_HAND: "Worse hand, Hp(0.07)",
    Series.FETUS: "Embryo/fetus, Hp(10)",
}
PERIOD = {
    PeriodKind.YEAR: "Calendar year",
    PeriodKind.ROLLING_12_MONTHS: "Last 12 months",
    PeriodKind.QUARTER: "Calendar quarter",
    PeriodKind.MONTH: "Calendar month",
    PeriodKind.FIVE_YEAR_BLOCK: "Five-year block",
    PeriodKind.ROLLING_FIVE_YEARS: "Last five years",
    PeriodKind.PREGNANCY: "Since the pregnancy declaration",
}
LEVEL = LEVEL_LABELS
LEVEL_CSS = {
    Level.BELOW_1: "state-good",
    Level.LEVEL_1: "state-warn",
    Level.LEVEL_2: "state-bad",
    Level.LIMIT_REACHED: "state-bad",
    "no_limit": "state-warn",
}
LOCATION = LOCATION_LABELS
CATEGORY = {**CATEGORY_LABELS, WorkerCategory.DECLARED_PREGNANT: "Declared pregnant worker"}
PRORATION = PRORATION_LABELS
MRD = MRD_LABELS
LENS = LENS_LABELS
LEVEL_KIND = {LevelKind.FRACTION: "fraction of the limit", LevelKind.ABSOLUTE: "mSv per period"}
RESULT = {
    "measured": "measured",
    "below_mrd": "below MRD",
    "unused": "unused",
    "lost": "lost",
    "not_returned": "not returned",
}
SOURCE = {
    "dosimetry_report": "dosimetry report",
    "rso_estimate": "estimate by the safety officer",
    "incident_estimate": "incident estimate",
}
