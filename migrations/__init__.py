"""Alembic environment of the logbook (installed as ``logbook.migrations``)."""
