"""The lab's time zone for a new database, given by the command that creates it."""
from __future__ import annotations

import sqlalchemy as sa
from flask import current_app

# The revision that creates the settings row (with UTC); the zone is set right after it.
FIRST_REVISION = "0001"
_SETTINGS = sa.table("lab_settings", sa.column("id"), sa.column("timezone"))


def set_lab_zone_after_first_revision(ctx, step, heads, run_args) -> None:
    """Alembic's per-step callback: after the first revision, store LAB_TIMEZONE as the lab's zone."""
    if not step.is_upgrade or step.up_revision_id != FIRST_REVISION:
        return
    zone = current_app.config["LAB_TIMEZONE"]  # checked when the app read its configuration
    ctx.execute(_SETTINGS.update().where(_SETTINGS.c.id == 1).values(timezone=zone))
