"""Alembic revisions of the Foldline schema (Alembic skips this file)."""
