"""The family of published sources the lab works under, from its limit set."""
from __future__ import annotations

from models.surveys.level_sources import family_of
from webapp.formatting import settings


def source_family() -> str | None:
    """The family of sources the lab works under: that of its limit set's preset, if any."""
    limit_set = settings().limit_set
    return family_of(limit_set.preset_key if limit_set is not None else None)
