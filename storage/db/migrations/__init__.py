"""Alembic environment and revisions; a package so that they ship with an installed Foldline."""
