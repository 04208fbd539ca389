"""Alembic's migrations, shipped with the app so an installed copy can build its database."""
