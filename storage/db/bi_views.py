"""The SQL views BI tools read directly, and the PostgreSQL role that may read only them.

The views (created by migration 0005) are the database's stable, documented surface: the
tables behind them may change between versions, the views' names and columns do not
(DEVELOPERS.md lists the columns). ``grant_bi_reader`` gives a PostgreSQL role SELECT on
these views and nothing else; on SQLite a BI tool opens the file read-only instead.
"""

from __future__ import annotations

import re

from sqlalchemy import text
from sqlalchemy.orm import Session

from storage.errors import ConflictError, translates_errors

BI_VIEWS = ("bi_latest_ranking", "bi_scores", "bi_champions", "bi_issued_forecasts")
ROLE_NAME = re.compile(r"[a-z_][a-z0-9_]{0,62}")


@translates_errors
def grant_bi_reader(session: Session, role: str) -> bool:
    """Let ``role`` read the BI views and nothing else, creating it (without login) if it
    does not exist; return whether it was created. PostgreSQL only."""
    if session.get_bind().dialect.name != "postgresql":
        raise ConflictError("read-only roles are a PostgreSQL feature; on SQLite, open the "
                            "store file read-only (file:foldline.db?mode=ro)")
    if not ROLE_NAME.fullmatch(role):
        raise ConflictError(f"role name {role!r} must be lower-case letters, digits and _")
    exists = session.scalar(text("SELECT 1 FROM pg_roles WHERE rolname = :role"),
                            {"role": role})
    if not exists:
        session.execute(text(f'CREATE ROLE "{role}" NOLOGIN'))
    schema = session.scalar(text("SELECT current_schema()"))
    session.execute(text(f'GRANT USAGE ON SCHEMA "{schema}" TO "{role}"'))
    for view in BI_VIEWS:
        session.execute(text(f'GRANT SELECT ON "{schema}"."{view}" TO "{role}"'))
    return not exists
