"""What an auditor reads: a candidate's score across runs, the runs that used a series
version, the audit log page by page with subjects in words, the full verification of the
chain (against a kept checkpoint if given) and the signed head to keep."""

from __future__ import annotations

from datetime import datetime

from sqlalchemy.orm import Session, sessionmaker

from storage.audit import (
    AuditEntry,
    AuditReport,
    Checkpoint,
    CheckpointError,
    audit_page,
    describe_subjects,
    extends,
    make_checkpoint,
    read_checkpoint,
    verify_audit_log,
)
from storage.results import ScorePoint, score_history
from storage.runs import RunInfo, runs_using_version
from storage.series import get_series, version_by_number

__all__ = ["AuditEntry", "AuditReport", "Checkpoint", "CheckpointError", "RunInfo", "ScorePoint",
           "audit_events", "full_verification", "runs_of_version", "scores_over_runs",
           "signed_head"]


def scores_over_runs(sessions: sessionmaker[Session], series_key: str, candidate_id: str, *,
                     metric: str, horizon: int | None, level: int | None) -> list[ScorePoint]:
    """A candidate's score on a series in every successful run, oldest first."""
    with sessions.begin() as session:
        get_series(session, series_key)
        return score_history(session, series_key, candidate_id, metric=metric,
                             horizon=horizon, level=level)


def runs_of_version(sessions: sessionmaker[Session], series_key: str,
                    version: int) -> list[RunInfo]:
    """Every run that asked for the series' version ``version``, oldest first."""
    with sessions.begin() as session:
        return runs_using_version(session, version_by_number(session, series_key, version).id)


def audit_events(sessions: sessionmaker[Session], *, start: datetime | None,
                 end: datetime | None, after_seq: int,
                 limit: int) -> tuple[list[AuditEntry], dict[str, str]]:
    """Up to ``limit`` events in the time range after ``after_seq``, and each subject of
    the events in words."""
    with sessions.begin() as session:
        events = audit_page(session, start=start, end=end, after_seq=after_seq, limit=limit)
        return events, describe_subjects(session, (e.subject for e in events))


def full_verification(sessions: sessionmaker[Session], checkpoint_text: str | None,
                      checkpoint_key: bytes | None) -> tuple[AuditReport, str | None]:
    """The full pass over the chain and every record; with a checkpoint (its JSON text and
    the key it was signed with), also whether the store still extends it (``None``) or where
    it does not."""
    checkpoint = (read_checkpoint(checkpoint_text, checkpoint_key or b"")
                  if checkpoint_text is not None else None)
    with sessions.begin() as session:
        report = verify_audit_log(session)
        cut = extends(session, checkpoint) if checkpoint is not None else None
    return report, cut


def signed_head(sessions: sessionmaker[Session], key: bytes) -> Checkpoint:
    """The chain's head signed with ``key``, for the auditor to keep outside the store."""
    with sessions.begin() as session:
        return make_checkpoint(session, key)
