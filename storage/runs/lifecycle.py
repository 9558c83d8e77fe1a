"""Runs: what was asked, by whom, and the lifecycle queued -> running -> final.

A run's request (series versions, candidates, plan and its seed, actor, idempotency key) is
fixed when it is queued. ``start_run``, ``record_progress``, ``finish_run`` and ``fail_run``
move it along; once its status is final (succeeded, failed, cancelled) the row is frozen and
every further change is refused with :class:`ImmutableRecordError`. Workers claim runs with
a lease (``lease_owner``, ``lease_expires_at``, ``attempts``) in a later queue.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Any, Literal

from sqlalchemy import insert, select
from sqlalchemy.orm import Session

from backtest.candidates import Candidate
from backtest.plan import Plan
from storage.audit import (
    as_row,
    canonical_json,
    record_event,
    run_final_digest,
    run_request_digest,
    run_subject,
    sha256_text,
)
from storage.db import (
    FINAL_STATUSES,
    Run,
    RunCandidate,
    RunSeries,
    SeriesRecord,
    SeriesVersion,
    utc_now,
)
from storage.errors import (
    ConflictError,
    ImmutableRecordError,
    NotFoundError,
    translates_errors,
)
from storage.results import pending_units
from storage.series import get_version
from storage.specs import plan_id_of, register_candidate, register_plan


@dataclass(frozen=True)
class RunInfo:
    """A run as stored, with the series versions and candidates it asked for."""

    id: int
    plan_id: str
    seed: int
    requested_by: str
    idempotency_key: str | None
    status: str
    queued_at: datetime
    started_at: datetime | None
    finished_at: datetime | None
    folds_done: int
    folds_total: int | None
    software: dict[str, str] | None
    failure_reason: str | None
    attempts: int
    series_version_ids: tuple[int, ...]
    candidate_ids: tuple[str, ...]


@translates_errors
def queue_run(session: Session, *, series_version_ids: Sequence[int],
              candidates: Sequence[Candidate], plan: Plan, actor: str,
              idempotency_key: str | None = None,
              unit_folds: Sequence[int] | None = None) -> RunInfo:
    """Record a requested run; the plan and candidates are registered if new.

    ``unit_folds`` are the fold counts of the series versions, counted when the request was
    checked; they are stored so the worker need not count again.

    Idempotency, the one rule: with an ``idempotency_key`` already used, the earlier run is
    returned if it asked for the same series (compared by key, so a retry after new actuals
    arrived still finds the run queued on the versions latest at the first try), the same
    candidates and the same plan; otherwise :class:`ConflictError` is raised.
    """
    versions, candidate_ids = tuple(series_version_ids), tuple(c.id for c in candidates)
    if idempotency_key is not None:
        earlier = session.execute(
            select(Run.id).where(Run.idempotency_key == idempotency_key)).scalar_one_or_none()
        if earlier is not None:
            return _same_request(session, get_run(session, earlier), versions, candidate_ids,
                                 plan)
    _check_request(session, versions, candidate_ids)
    folds = list(unit_folds) if unit_folds is not None else [None] * len(versions)
    if len(folds) != len(versions):
        raise ConflictError("a run needs one fold count per series version")
    run = Run(plan_id=register_plan(session, plan, actor=actor), seed=plan.seed,
              requested_by=actor, idempotency_key=idempotency_key, status="queued",
              queued_at=utc_now(), folds_done=0, attempts=0,
              folds_total=sum(folds) if unit_folds is not None else None)
    session.add(run)
    for candidate in candidates:
        register_candidate(session, candidate.id, candidate.canonical, actor=actor)
    session.flush()
    series_rows = [{"run_id": run.id, "series_version_id": v, "position": i, "folds": n}
                   for i, (v, n) in enumerate(zip(versions, folds))]
    candidate_rows = [{"run_id": run.id, "candidate_id": c, "position": i}
                      for i, c in enumerate(candidate_ids)]
    session.execute(insert(RunSeries), series_rows)
    session.execute(insert(RunCandidate), candidate_rows)
    record_event(session, actor=actor, action="run.queued", subject=run_subject(run.id),
                 digest=run_request_digest([as_row(run)], series_rows, candidate_rows))
    return _info(run, versions, candidate_ids)


@translates_errors
def get_run(session: Session, run_id: int) -> RunInfo:
    """A run by id; raise :class:`NotFoundError` if there is none."""
    run = _run(session, run_id)
    return _info(run, *_request(session, run_id))


@translates_errors
def start_run(session: Session, run_id: int, *, actor: str, folds_total: int | None = None,
              lease_owner: str | None = None,
              lease_expires_at: datetime | None = None) -> RunInfo:
    """Move a queued run to running."""
    run = _changeable(session, run_id, expected="queued")
    run.status, run.started_at, run.attempts = "running", utc_now(), run.attempts + 1
    run.folds_total, run.lease_owner, run.lease_expires_at = (folds_total, lease_owner,
                                                              lease_expires_at)
    session.flush()
    state = {"status": run.status, "started_at": run.started_at.isoformat(),
             "attempts": run.attempts, "lease_owner": lease_owner}
    record_event(session, actor=actor, action="run.started", subject=run_subject(run_id),
                 digest=sha256_text(canonical_json(state)))
    return get_run(session, run_id)


@translates_errors
def record_progress(session: Session, run_id: int, *, folds_done: int,
                    folds_total: int | None = None) -> None:
    """Update a running run's fold counters (operational state, not audited)."""
    run = _changeable(session, run_id, expected="running")
    run.folds_done = folds_done
    if folds_total is not None:
        run.folds_total = folds_total
    session.flush()


@translates_errors
def finish_run(session: Session, run_id: int, *, actor: str, software: Mapping[str, str],
               timing: Mapping[str, float] | None = None) -> RunInfo:
    """Mark a running run succeeded; every requested series must have its results stored."""
    run = _changeable(session, run_id, expected="running")
    missing = pending_units(session, run_id)
    if missing:
        raise ConflictError(f"run {run_id} cannot succeed: results of series version(s) "
                            f"{', '.join(map(str, missing))} are not stored")
    return _final(session, run, actor, "succeeded", software=dict(software),
                  timing=dict(timing or {}))


@translates_errors
def fail_run(session: Session, run_id: int, *, actor: str, reason: str,
             status: Literal["failed", "cancelled"] = "failed",
             software: Mapping[str, str] | None = None) -> RunInfo:
    """End a queued or running run as failed (or cancelled) with a reason."""
    run = _changeable(session, run_id, expected=None)
    return _final(session, run, actor, status, failure_reason=reason,
                  software=dict(software) if software is not None else None)


def _final(session: Session, run: Run, actor: str, status: str, **values: Any) -> RunInfo:
    run.status, run.finished_at = status, utc_now()
    run.lease_owner = run.lease_expires_at = None
    for name, value in values.items():
        setattr(run, name, value)
    session.flush()
    record_event(session, actor=actor, action="run.finished", subject=run_subject(run.id),
                 digest=run_final_digest([as_row(run)]))
    return get_run(session, run.id)


def _run(session: Session, run_id: int, *, for_update: bool = False) -> Run:
    run = session.get(Run, run_id, with_for_update=for_update)
    if run is None:
        raise NotFoundError(f"run {run_id} does not exist")
    return run


def _changeable(session: Session, run_id: int, *, expected: str | None) -> Run:
    run = _run(session, run_id, for_update=True)
    if run.status in FINAL_STATUSES:
        raise ImmutableRecordError(f"run {run_id} is {run.status}; a finished run cannot "
                                   "change")
    if expected is not None and run.status != expected:
        raise ConflictError(f"run {run_id} is {run.status}, not {expected}")
    return run


def _check_request(session: Session, versions: tuple[int, ...],
                   candidate_ids: tuple[str, ...]) -> None:
    if not versions or not candidate_ids:
        raise ConflictError("a run needs at least one series version and one candidate")
    for version_id in versions:
        get_version(session, version_id)
    if len(set(versions)) != len(versions) or len(set(candidate_ids)) != len(candidate_ids):
        raise ConflictError("a run lists a series version or candidate twice")


def _same_request(session: Session, run: RunInfo, versions: tuple[int, ...],
                  candidate_ids: tuple[str, ...], plan: Plan) -> RunInfo:
    asked = (_series_keys(session, versions), candidate_ids, plan_id_of(plan))
    if asked != (_series_keys(session, run.series_version_ids), run.candidate_ids, run.plan_id):
        key = (run.idempotency_key or "").split(":", 1)[-1]
        raise ConflictError(f"idempotency key {key!r} was used for run {run.id}, which asked "
                            "for other series, candidates or plan")
    return run


def _series_keys(session: Session, versions: Sequence[int]) -> tuple[str, ...]:
    keys = dict(session.execute(select(SeriesVersion.id, SeriesRecord.key)
                                .join(SeriesRecord, SeriesRecord.id == SeriesVersion.series_id)
                                .where(SeriesVersion.id.in_(versions))).tuples().all())
    return tuple(keys.get(v, "") for v in versions)


def _request(session: Session, run_id: int) -> tuple[tuple[int, ...], tuple[str, ...]]:
    versions = session.scalars(select(RunSeries.series_version_id)
                               .where(RunSeries.run_id == run_id).order_by(RunSeries.position))
    candidates = session.scalars(select(RunCandidate.candidate_id)
                                 .where(RunCandidate.run_id == run_id)
                                 .order_by(RunCandidate.position))
    return tuple(versions), tuple(candidates)


def _info(run: Run, versions: tuple[int, ...], candidate_ids: tuple[str, ...]) -> RunInfo:
    return RunInfo(run.id, run.plan_id, run.seed, run.requested_by, run.idempotency_key,
                   run.status, run.queued_at, run.started_at, run.finished_at, run.folds_done,
                   run.folds_total, run.software, run.failure_reason, run.attempts, versions,
                   candidate_ids)
