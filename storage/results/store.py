"""Writing and reading a run's results, one series at a time.

The unit of work is one series version of one run: :func:`write_series_result` stores all
of its rows (candidates, folds, forecasts, bounds, warnings, scores, ranking, evidence) and
its audit event in the caller's transaction, so a crash leaves all or nothing of the unit,
and a long run resumes with :func:`pending_units`. Fold-level rows are always kept, however
large the run: every stored score can be recomputed from them, which is what an audit needs.
"""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from backtest.results import BacktestResult, FoldResult, SeriesResult
from storage.audit import UNIT_TABLES, record_event, unit_digest, unit_subject
from storage.db import (
    FINAL_STATUSES,
    CandidateRecord,
    PlanRecord,
    ResultCandidate,
    Run,
    RunSeries,
    SeriesRecord,
    SeriesResultRecord,
    SeriesVersion,
    insert_rows,
    utc_now,
)
from storage.errors import ConflictError, ImmutableRecordError, NotFoundError, translates_errors
from storage.results.rows import FOLD_TABLES, folds_of, series_result_of, unit_rows
from storage.specs import register_candidate


@translates_errors
def write_series_result(session: Session, run_id: int, series_version_id: int,
                        result: SeriesResult, *, actor: str) -> str:
    """Store one series' results of a running run; return the unit's content digest.

    Raises :class:`ImmutableRecordError` if the run is finished or the unit is already
    stored, :class:`ConflictError` if the run is not running, the version is not part of
    the run, or ``result`` was computed on other data than that version.
    """
    _check_writable(session, run_id, series_version_id, result)
    for candidate in result.candidates:
        register_candidate(session, candidate.candidate_id, candidate.spec, actor=actor)
    rows = unit_rows(run_id, series_version_id, result, written_at=utc_now(),
                     written_by=actor)
    for table in UNIT_TABLES:
        insert_rows(session, table, rows[table])
    digest = unit_digest(rows)
    record_event(session, actor=actor, action="results.written",
                 subject=unit_subject(run_id, series_version_id), digest=digest)
    return digest


@translates_errors
def completed_units(session: Session, run_id: int) -> list[int]:
    """Series version ids whose results are stored for a run, in request order."""
    return list(session.scalars(
        select(RunSeries.series_version_id).join(
            SeriesResultRecord, (SeriesResultRecord.run_id == RunSeries.run_id)
            & (SeriesResultRecord.series_version_id == RunSeries.series_version_id))
        .where(RunSeries.run_id == run_id).order_by(RunSeries.position)))


@translates_errors
def pending_units(session: Session, run_id: int) -> list[int]:
    """Series version ids of a run whose results are not stored yet, in request order."""
    done = set(completed_units(session, run_id))
    requested = session.scalars(select(RunSeries.series_version_id)
                                .where(RunSeries.run_id == run_id).order_by(RunSeries.position))
    return [version for version in requested if version not in done]


@translates_errors
def load_series_result(session: Session, run_id: int, series_version_id: int) -> SeriesResult:
    """One stored unit as the :class:`SeriesResult` that was written."""
    keys = {"run_id": run_id, "series_version_id": series_version_id}
    rows = {table: list(session.execute(
                select(table).where(*(table.c[k] == v for k, v in keys.items()))).mappings())
            for table in UNIT_TABLES}
    if not rows[SeriesResultRecord.__table__]:
        raise NotFoundError(f"run {run_id} has no results for series version "
                            f"{series_version_id}")
    ids = {r["candidate_id"] for r in rows[ResultCandidate.__table__]}
    specs = dict(session.execute(select(CandidateRecord.id, CandidateRecord.spec)
                                 .where(CandidateRecord.id.in_(ids))).tuples().all())
    key = session.scalars(select(SeriesRecord.key).join(SeriesVersion)
                          .where(SeriesVersion.id == series_version_id)).one()
    return series_result_of(key, rows, specs)


@translates_errors
def load_candidate_folds(session: Session, run_id: int, series_version_id: int,
                         candidate_id: str) -> tuple[FoldResult, ...]:
    """One candidate's stored folds of one unit, without the rest of the unit (its
    evidence and the other candidates' rows); empty if the unit has none of it."""
    keys = {"run_id": run_id, "series_version_id": series_version_id,
            "candidate_id": candidate_id}
    rows = {table: list(session.execute(
                select(table).where(*(table.c[k] == v for k, v in keys.items()))).mappings())
            for table in FOLD_TABLES}
    key = session.scalars(select(SeriesRecord.key).join(SeriesVersion)
                          .where(SeriesVersion.id == series_version_id)).one()
    return folds_of(key, rows)


@translates_errors
def load_run_result(session: Session, run_id: int, *, limit: int | None = None
                    ) -> BacktestResult:
    """A run's stored results as a :class:`BacktestResult`, series in request order; with
    ``limit``, only the first ``limit`` stored series.

    For a run that has not succeeded, only the units stored so far are included, and
    ``software``/``timing`` are empty until the run is finished.
    """
    run = session.get(Run, run_id)
    if run is None:
        raise NotFoundError(f"run {run_id} does not exist")
    plan = session.get_one(PlanRecord, run.plan_id).body
    series = tuple(load_series_result(session, run_id, version)
                   for version in completed_units(session, run_id)[:limit])
    return BacktestResult(plan, run.software or {}, series, run.timing or {})


def _check_writable(session: Session, run_id: int, series_version_id: int,
                    result: SeriesResult) -> None:
    run = session.get(Run, run_id, with_for_update=True)
    if run is None:
        raise NotFoundError(f"run {run_id} does not exist")
    if run.status in FINAL_STATUSES:
        raise ImmutableRecordError(f"run {run_id} is {run.status}; its results cannot change")
    if run.status != "running":
        raise ConflictError(f"run {run_id} is {run.status}; results are written while running")
    if session.get(RunSeries, (run_id, series_version_id)) is None:
        raise ConflictError(f"series version {series_version_id} is not part of run {run_id}")
    if session.get(SeriesResultRecord, (run_id, series_version_id)) is not None:
        raise ImmutableRecordError(f"results of series version {series_version_id} in run "
                                   f"{run_id} are already stored")
    fingerprint = session.get_one(SeriesVersion, series_version_id).fingerprint
    if result.series.get("fingerprint", fingerprint) != fingerprint:
        raise ConflictError(f"the results were computed on other data than series version "
                            f"{series_version_id}")
