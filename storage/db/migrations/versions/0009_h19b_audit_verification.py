"""The heads that passed verification, so the next verification continues from the last;
the skeletons of series keys, so a look-alike of a stored key is refused.

Revision ID: 0009_h19b
Revises: 0009_h19a
Create Date: 2026-12-03
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

from storage.series import skeleton

revision: str = "0009_h19b"
down_revision: str | Sequence[str] | None = "0009_h19a"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "audit_verification",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("seq", sa.Integer(), nullable=False),
        sa.Column("hash", sa.String(length=64), nullable=False),
        sa.Column("keyed_from", sa.Integer(), nullable=True),
        sa.Column("started_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("finished_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("mode", sa.String(length=32), nullable=False),
        sa.Column("events_checked", sa.Integer(), nullable=False),
        sa.Column("mac", sa.String(length=64), nullable=True),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_audit_verification")),
    )
    op.create_table(
        "series_skeleton",
        sa.Column("series_id", sa.Integer(), nullable=False),
        sa.Column("skeleton", sa.Text(), nullable=False),
        sa.ForeignKeyConstraint(["series_id"], ["series.id"],
                                name=op.f("fk_series_skeleton_series_id_series")),
        sa.PrimaryKeyConstraint("series_id", name=op.f("pk_series_skeleton")),
    )
    op.create_index(op.f("ix_series_skeleton_skeleton"), "series_skeleton", ["skeleton"])
    series = sa.table("series", sa.column("id", sa.Integer()), sa.column("key", sa.String()))
    skeletons = sa.table("series_skeleton", sa.column("series_id", sa.Integer()),
                         sa.column("skeleton", sa.String()))
    rows = [{"series_id": id_, "skeleton": skeleton(key)}
            for id_, key in op.get_bind().execute(sa.select(series.c.id, series.c.key))]
    if rows:
        op.bulk_insert(skeletons, rows)


def downgrade() -> None:
    op.drop_index(op.f("ix_series_skeleton_skeleton"), table_name="series_skeleton")
    op.drop_table("series_skeleton")
    op.drop_table("audit_verification")
