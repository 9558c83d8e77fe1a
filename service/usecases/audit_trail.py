"""What an auditor reads: a candidate's score across runs, the runs that used a series
version, the audit log page by page with subjects in words, and the chain's verification."""

from __future__ import annotations

from datetime import datetime

from sqlalchemy.orm import Session, sessionmaker

from storage.audit import AuditEntry, AuditReport, audit_page, describe_subjects, verify_audit_log
from storage.results import ScorePoint, score_history
from storage.runs import RunInfo, runs_using_version
from storage.series import get_series, version_by_number

__all__ = ["AuditEntry", "RunInfo", "ScorePoint", "AuditReport", "audit_events",
           "runs_of_version", "scores_over_runs", "verify_store"]


def scores_over_runs(sessions: sessionmaker[Session], series_key: str, candidate_id: str, *,
                     metric: str, horizon: int | str, level: int | None) -> list[ScorePoint]:
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


def verify_store(sessions: sessionmaker[Session]) -> AuditReport:
    """The whole chain and the content it vouches for, checked."""
    with sessions.begin() as session:
        return verify_audit_log(session)
