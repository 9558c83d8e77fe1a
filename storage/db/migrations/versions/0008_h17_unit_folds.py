"""Each unit's fold count, counted once when the run is checked at submission, so the
worker need not count again.

Revision ID: 0008_h17
Revises: 0007_h19
Create Date: 2026-12-03

Runs queued before this revision have no count (null); their worker counts as before.
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0008_h17"
down_revision: str | Sequence[str] | None = "0007_h19"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.add_column("run_series", sa.Column("folds", sa.Integer(), nullable=True))


def downgrade() -> None:
    # A plain DROP COLUMN (SQLite has it since 3.35): the batch form would copy and drop
    # the table under the foreign keys that point at it.
    op.drop_column("run_series", "folds")
