"""API keys: the keys' hashes, names and roles, and their revocations; both append-only.

Revision ID: 0002
Revises: 0001
Create Date: 2026-12-02

A key is revoked by adding a row to ``api_key_revocation``, never by changing ``api_key``,
so both tables get the same append-only triggers as the rest of the store (their messages
contain ``foldline_immutable``; the PostgreSQL trigger function comes from revision 0001).
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0002"
down_revision: str | Sequence[str] | None = "0001"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

TIMESTAMP = sa.DateTime(timezone=True)
TABLES = ("api_key", "api_key_revocation")


def upgrade() -> None:
    op.create_table(
        "api_key",
        sa.Column("id", sa.String(length=32), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("role", sa.String(length=32), nullable=False),
        sa.Column("secret_hash", sa.String(length=64), nullable=False),
        sa.Column("created_at", TIMESTAMP, nullable=False),
        sa.Column("created_by", sa.String(length=200), nullable=False),
        sa.CheckConstraint("role IN ('submitter', 'reader', 'auditor', 'admin')",
                           name=op.f("ck_api_key_role")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_api_key")),
        sa.UniqueConstraint("name", name=op.f("uq_api_key_name")),
    )
    op.create_table(
        "api_key_revocation",
        sa.Column("key_id", sa.String(length=32), nullable=False),
        sa.Column("revoked_at", TIMESTAMP, nullable=False),
        sa.Column("revoked_by", sa.String(length=200), nullable=False),
        sa.ForeignKeyConstraint(["key_id"], ["api_key.id"],
                                name=op.f("fk_api_key_revocation_key_id_api_key")),
        sa.PrimaryKeyConstraint("key_id", name=op.f("pk_api_key_revocation")),
    )
    if op.get_context().dialect.name == "postgresql":
        _guard_postgresql()
    else:
        _guard_sqlite()


def downgrade() -> None:
    op.drop_table("api_key_revocation")
    op.drop_table("api_key")


def _guard_sqlite() -> None:
    for table in TABLES:
        for action in ("UPDATE", "DELETE"):
            message = f"foldline_immutable: {action} on {table} refused; rows are append-only"
            op.execute(f"CREATE TRIGGER {table}_no_{action.lower()} BEFORE {action} "
                       f"""ON "{table}" BEGIN SELECT RAISE(ABORT, '{message}'); END""")


def _guard_postgresql() -> None:
    for table in TABLES:
        op.execute(f'CREATE TRIGGER {table}_append_only BEFORE UPDATE OR DELETE ON "{table}" '
                   "FOR EACH ROW EXECUTE FUNCTION foldline_refuse_change()")
        op.execute(f'CREATE TRIGGER {table}_no_truncate BEFORE TRUNCATE ON "{table}" '
                   "FOR EACH STATEMENT EXECUTE FUNCTION foldline_refuse_change()")
