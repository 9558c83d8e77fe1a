"""Reviewer page sessions ended on the server: a signed-out cookie stops working.

Revision ID: 0007_h19
Revises: 0006_h19
Create Date: 2026-12-03
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0007_h19"
down_revision: str | Sequence[str] | None = "0006_h19"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "page_sign_out",
        sa.Column("session_digest", sa.String(length=64), nullable=False),
        sa.Column("key_id", sa.String(length=32), nullable=False),
        sa.Column("signed_out_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(["key_id"], ["api_key.id"],
                                name=op.f("fk_page_sign_out_key_id_api_key")),
        sa.PrimaryKeyConstraint("session_digest", name=op.f("pk_page_sign_out")),
    )


def downgrade() -> None:
    op.drop_table("page_sign_out")
