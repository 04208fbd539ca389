"""Where each survey action level comes from, for the family of rules the lab works under.

A lab works under one family of sources, the one its limit set belongs to. A level is shown with a
source only where the project holds a published one for that family; elsewhere the page says the
level is set by the local rules, never another jurisdiction's rule as if it applied there. Each source
quotes only what its clause says (REFERENCE.md, "Analytical X-ray equipment").
"""
from __future__ import annotations

from models.surveys.tables import PointLevel

# The family of each limit preset (models/exposure/presets.py keys).
FAMILY_OF_PRESET = {"icrp103": "icrp", "euratom2013": "euratom", "cfr10_20": "us", "irr17": "uk"}
FAMILY_LABELS = {
    "icrp": "ICRP recommendations",
    "euratom": "2013/59/Euratom and national law",
    "us": "US NRC and state rules",
    "uk": "UK IRR17",
}

_SOURCES = {
    ("us", PointLevel.SURFACE): (
        "ANSI N43.2 as quoted in DOE-HDBK-1109-97: 2.5 µSv/h (0.25 mrem/h) at 5 cm from any outer "
        "surface of an enclosed-beam system in normal operation"),
    ("us", PointLevel.HOUSING): (
        "25 Pa. Code 227a.13(b): 2.5 mrem (0.025 mSv) in 1 hour at 5 cm from the tube housing with all "
        "shutters closed; Tennessee 0400-20-06-.07(1)(a): 2.5 mR in 1 hour at 5 cm at any specified "
        "tube rating"),
}
LOCAL_RULES = "set by your local rules"


def family_of(preset_key: str | None) -> str | None:
    """The family of sources a limit set belongs to; None for a lab's own set."""
    return FAMILY_OF_PRESET.get(preset_key or "")


def level_source(level: PointLevel, family: str | None) -> str:
    """The published source of a survey level for a family, or a plain "set by your local rules"."""
    source = _SOURCES.get((family, level))
    if source is not None:
        return source
    under = FAMILY_LABELS.get(family, "the lab's own limit set")
    return (f"{LOCAL_RULES}: the logbook holds no published source for this level under {under}. "
            "The default is the value US sources give; have the radiation safety officer confirm or "
            "change it on the instrument")


def level_sources(family: str | None) -> dict[PointLevel, str]:
    """The source of each kind of point's level for a family."""
    return {level: level_source(level, family) for level in PointLevel}
