"""Finding runs and what they used: by filters (the run listing), by the
series version they asked for, the series versions and the candidates' labels of a run."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

from sqlalchemy import select
from sqlalchemy.orm import Session

from backtest.candidates import parse_candidate
from storage.db import (
    CandidateRecord,
    Run,
    RunCandidate,
    RunSeries,
    SeriesRecord,
    SeriesVersion,
)
from storage.errors import translates_errors
from storage.runs.lifecycle import RunInfo, get_run
from storage.series import VersionInfo, version_info


@translates_errors
def run_versions(session: Session, run_id: int) -> list[VersionInfo]:
    """The series versions a run asked for, in request order."""
    rows = session.execute(
        select(SeriesVersion, SeriesRecord.key)
        .join(RunSeries, RunSeries.series_version_id == SeriesVersion.id)
        .join(SeriesRecord, SeriesRecord.id == SeriesVersion.series_id)
        .where(RunSeries.run_id == run_id).order_by(RunSeries.position))
    return [version_info(version, key) for version, key in rows]


@dataclass(frozen=True)
class RunFilter:
    """Which runs a listing shows; every field left ``None`` does not filter."""

    status: str | None = None
    series_key: str | None = None
    requested_by: str | None = None
    finished_from: datetime | None = None
    finished_to: datetime | None = None


@translates_errors
def list_runs(session: Session, where: RunFilter, *, before: int | None,
              limit: int) -> tuple[list[RunInfo], bool]:
    """Runs matching ``where``, newest first, with ids below the cursor ``before``; and
    whether more follow. Keyset paging: a page stays stable while new runs are queued."""
    query = select(Run.id).order_by(Run.id.desc()).limit(limit + 1)
    if before is not None:
        query = query.where(Run.id < before)
    if where.status is not None:
        query = query.where(Run.status == where.status)
    if where.requested_by is not None:
        query = query.where(Run.requested_by == where.requested_by)
    if where.finished_from is not None:
        query = query.where(Run.finished_at >= where.finished_from)
    if where.finished_to is not None:
        query = query.where(Run.finished_at < where.finished_to)
    if where.series_key is not None:
        query = query.where(Run.id.in_(
            select(RunSeries.run_id)
            .join(SeriesVersion, SeriesVersion.id == RunSeries.series_version_id)
            .join(SeriesRecord, SeriesRecord.id == SeriesVersion.series_id)
            .where(SeriesRecord.key == where.series_key)))
    ids = list(session.scalars(query))
    return [get_run(session, run_id) for run_id in ids[:limit]], len(ids) > limit


@translates_errors
def run_candidate_labels(session: Session, run_id: int) -> dict[str, str]:
    """Each candidate of a run with its label at the season lengths of the run's series
    (labels of one candidate at several season lengths are joined with " / ")."""
    lengths = sorted(set(session.scalars(
        select(SeriesRecord.season_length)
        .join(SeriesVersion, SeriesVersion.series_id == SeriesRecord.id)
        .join(RunSeries, RunSeries.series_version_id == SeriesVersion.id)
        .where(RunSeries.run_id == run_id))))
    specs = session.execute(
        select(CandidateRecord.id, CandidateRecord.spec)
        .join(RunCandidate, RunCandidate.candidate_id == CandidateRecord.id)
        .where(RunCandidate.run_id == run_id).order_by(RunCandidate.position))
    labels = {}
    for candidate_id, spec in specs:
        candidate = parse_candidate(spec)
        labels[candidate_id] = " / ".join(dict.fromkeys(candidate.label(m) for m in lengths))
    return labels


@translates_errors
def runs_using_version(session: Session, series_version_id: int) -> list[RunInfo]:
    """Every run that asked for a series version, oldest first."""
    run_ids = session.scalars(select(RunSeries.run_id)
                              .where(RunSeries.series_version_id == series_version_id)
                              .order_by(RunSeries.run_id))
    return [get_run(session, run_id) for run_id in run_ids]
