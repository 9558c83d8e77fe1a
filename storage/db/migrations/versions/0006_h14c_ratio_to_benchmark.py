"""The ranking column ``skill`` is the ratio of a candidate's score to the benchmark's.

Revision ID: 0006_h14c
Revises: 0006_h14b
Create Date: 2026-12-03

Lower is better and below 1 beats the benchmark, the opposite of what a skill score
(1 - ratio) means, so the column gets the name of what it holds. Both backends rename a
column in place (SQLite since 3.25), keeping its values, the append-only triggers and the
audit digests (which hash values in column order, not names).
"""

from collections.abc import Sequence

from alembic import op

revision: str = "0006_h14c"
down_revision: str | Sequence[str] | None = "0006_h14b"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.execute("ALTER TABLE rank_row RENAME COLUMN skill TO ratio_to_benchmark")


def downgrade() -> None:
    op.execute("ALTER TABLE rank_row RENAME COLUMN ratio_to_benchmark TO skill")
