"""An index on the audit log's subjects, so authentication finds a key's audited digest.

Revision ID: 0006_h19
Revises: 0006_h14c
Create Date: 2026-12-03

Authentication compares a key's stored row with the digest its audit event recorded
(``storage.access.keys.find_credentials``); the lookup by subject and action must not scan the log.
"""

from collections.abc import Sequence

from alembic import op

revision: str = "0006_h19"
down_revision: str | Sequence[str] | None = "0006_h14c"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

INDEX = "ix_audit_event_subject"


def upgrade() -> None:
    op.create_index(op.f(INDEX), "audit_event", ["subject", "action"])


def downgrade() -> None:
    op.drop_index(op.f(INDEX), table_name="audit_event")
