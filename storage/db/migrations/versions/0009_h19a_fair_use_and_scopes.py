"""Fair use and ownership: a key's scope, a run's estimated fits, runs by requester.

Revision ID: 0009_h19a
Revises: 0008_h17
Create Date: 2026-12-03

``api_key.scope`` is the series-key prefix a key's team owns; keys made before it are
global (null). ``run.estimated_fits`` keeps the fit estimate made at submission, which the
per-key budget adds up; older runs have none (null) and count as nothing. Both columns are
left out of a row's audited digest while null, so digests recorded before stay valid. The
indexes on ``(requested_by, status)`` and ``(requested_by, started_at)`` serve the per-key
counts of quotas and the fair claim order (running runs, last start per requester).
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0009_h19a"
down_revision: str | Sequence[str] | None = "0008_h17"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

INDEXES = {"ix_run_requested_by_status": ["requested_by", "status"],
           "ix_run_requested_by_started_at": ["requested_by", "started_at"]}


def upgrade() -> None:
    op.add_column("api_key", sa.Column("scope", sa.String(length=200), nullable=True))
    op.add_column("run", sa.Column("estimated_fits", sa.Integer(), nullable=True))
    for name, columns in INDEXES.items():
        op.create_index(op.f(name), "run", columns)


def downgrade() -> None:
    for name in INDEXES:
        op.drop_index(op.f(name), table_name="run")
    # A plain DROP COLUMN (SQLite has it since 3.35): the batch form would copy and drop
    # these tables, which other tables' foreign keys refer to.
    op.drop_column("run", "estimated_fits")
    op.drop_column("api_key", "scope")
