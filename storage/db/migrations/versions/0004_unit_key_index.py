"""A covering index on the result units' keys, so the ranking never reads evidence rows.

Revision ID: 0004
Revises: 0003
Create Date: 2026-12-02

``series_result`` rows carry the evidence document (hundreds of kB each); on SQLite the
latest-run lookup of the BI ranking read every one of them through the primary key. The
index holds the key columns and the benchmark id that the ranking needs.
"""

from collections.abc import Sequence

from alembic import op

revision: str = "0004"
down_revision: str | Sequence[str] | None = "0003"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

INDEX = "ix_series_result_run_id"


def upgrade() -> None:
    op.create_index(op.f(INDEX), "series_result",
                    ["run_id", "series_version_id", "benchmark_id"])


def downgrade() -> None:
    op.drop_index(op.f(INDEX), table_name="series_result")
