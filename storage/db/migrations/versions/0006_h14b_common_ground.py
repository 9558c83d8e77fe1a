"""Ranking rows on common ground: the own-folds score, the common origins and the points.

Revision ID: 0006_h14b
Revises: 0006_h14a
Create Date: 2026-12-03

A ranking row's ``score`` is over the origins every ranked candidate completed; the new
columns keep the candidate's own-folds figure (``score_own_folds``), how many origins the
ranking rests on (``common_folds``) and how many of its possible points carry the score
(``score_count`` of ``score_possible``). Rows written before this revision have them null.
"""

from collections.abc import Sequence
from typing import Any

import sqlalchemy as sa
from alembic import op

revision: str = "0006_h14b"
down_revision: str | Sequence[str] | None = "0006_h14a"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

COLUMNS: tuple[tuple[str, sa.types.TypeEngine[Any]], ...] = (
    ("score_own_folds", sa.Double()),
    ("common_folds", sa.Integer()),
    ("score_count", sa.Integer()),
    ("score_possible", sa.Integer()),
)


def upgrade() -> None:
    for name, kind in COLUMNS:
        op.add_column("rank_row", sa.Column(name, kind, nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("rank_row") as batch:
        for name, _ in reversed(COLUMNS):
            batch.drop_column(name)
