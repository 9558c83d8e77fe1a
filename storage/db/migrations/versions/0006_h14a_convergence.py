"""Convergence in stored results: per fold whether its estimate converged, per ranking row
how many completed folds did not.

Revision ID: 0006_h14a
Revises: 0005
Create Date: 2026-12-03

Older rows have no verdict: ``converged`` is null (unknown) and ``folds_not_converged`` 0.
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0006_h14a"
down_revision: str | Sequence[str] | None = "0005"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.add_column("fold_result", sa.Column("converged", sa.Boolean(), nullable=True))
    op.add_column("rank_row", sa.Column("folds_not_converged", sa.Integer(), nullable=False,
                                        server_default="0"))


def downgrade() -> None:
    with op.batch_alter_table("rank_row") as table:
        table.drop_column("folds_not_converged")
    with op.batch_alter_table("fold_result") as table:
        table.drop_column("converged")
