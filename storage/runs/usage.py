"""What one requester (an API key's name) has in the queue and has spent of its fit budget.

The service's per-key quotas (:mod:`service.usecases.quotas`) read these figures inside the
submission's transaction. :func:`requester_usage` first takes the audit log's append lock
(on PostgreSQL; SQLite's writer lock already serialises writers), so two submissions of the
same key at once are counted one after the other and cannot both slip under a limit.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import cast

from sqlalchemy import and_, func, not_, select
from sqlalchemy.orm import Session

from storage.audit import lock_audit_log
from storage.db import Run
from storage.errors import translates_errors

RECENT_RUNS = 10


@dataclass(frozen=True)
class Usage:
    """A requester's queued runs, and the estimated fits of its runs queued since a time
    (``(queued_at, fits)``, oldest first)."""

    queued: int
    spent: tuple[tuple[datetime, int], ...]

    @property
    def fits(self) -> int:
        return sum(fits for _, fits in self.spent)


@translates_errors
def requester_usage(session: Session, requested_by: str, *, since: datetime) -> Usage:
    """The runs ``requested_by`` has waiting and the fits it spent since ``since``.

    A run cancelled before it started computed nothing and costs nothing.
    """
    lock_audit_log(session)
    queued = session.scalar(select(func.count()).select_from(Run).where(
        Run.requested_by == requested_by, Run.status == "queued")) or 0
    never_ran = and_(Run.status == "cancelled", Run.started_at.is_(None))
    spent = session.execute(
        select(Run.queued_at, Run.estimated_fits)
        .where(Run.requested_by == requested_by, Run.queued_at >= since,
               Run.estimated_fits.is_not(None), not_(never_ran))
        .order_by(Run.queued_at, Run.id)).tuples().all()
    # Rows without an estimate are filtered out above, so every estimated_fits is an int.
    return Usage(queued, tuple(cast(Sequence[tuple[datetime, int]], spent)))


@translates_errors
def typical_run_seconds(session: Session, requested_by: str) -> float | None:
    """The mean time from start to end of the requester's last finished runs, if any."""
    recent = (select(Run.started_at, Run.finished_at)
              .where(Run.requested_by == requested_by, Run.started_at.is_not(None),
                     Run.finished_at.is_not(None))
              .order_by(Run.finished_at.desc()).limit(RECENT_RUNS))
    spans = [(end - start).total_seconds() for start, end in session.execute(recent)]
    return sum(spans) / len(spans) if spans else None
