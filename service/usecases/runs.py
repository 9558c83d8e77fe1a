"""Reading and cancelling runs: a run as the API and the pages describe it, the run
listing, and cancel requests."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

from sqlalchemy.orm import Session, sessionmaker

from service.usecases.transactions import write
from storage.runs import (
    RunFilter,
    RunInfo,
    cancel_requester,
    get_run,
    list_runs,
    request_cancel,
    run_candidate_labels,
    run_versions,
)
from storage.series import VersionInfo

__all__ = ["RunInfo", "RunView", "cancel_run", "read_run", "run_views"]


@dataclass(frozen=True)
class RunView:
    """A run with what describing it needs: its series versions, who asked to cancel it,
    and its candidates' labels."""

    run: RunInfo
    versions: tuple[VersionInfo, ...]
    cancel_requested_by: str | None
    labels: dict[str, str]


def read_run(sessions: sessionmaker[Session], run_id: int) -> RunView:
    """One run."""
    with sessions.begin() as session:
        return _view(session, get_run(session, run_id))


def run_views(sessions: sessionmaker[Session], *, status: str | None = None,
              series_key: str | None = None, requested_by: str | None = None,
              finished_from: datetime | None = None, finished_to: datetime | None = None,
              before: int | None = None, limit: int) -> tuple[list[RunView], bool]:
    """Runs newest first, filtered, up to ``limit`` with ids below ``before``; and whether
    more follow."""
    where = RunFilter(status=status, series_key=series_key, requested_by=requested_by,
                      finished_from=finished_from, finished_to=finished_to)
    with sessions.begin() as session:
        runs, more = list_runs(session, where, before=before, limit=limit)
        return [_view(session, run) for run in runs], more


def cancel_run(sessions: sessionmaker[Session], run_id: int, *, actor: str) -> RunView:
    """Cancel a queued run at once, or ask a running run's worker to stop."""
    return write(sessions, lambda session: _view(
        session, request_cancel(session, run_id, actor=actor)))


def _view(session: Session, run: RunInfo) -> RunView:
    return RunView(run, tuple(run_versions(session, run.id)), cancel_requester(session, run.id),
                   run_candidate_labels(session, run.id))
