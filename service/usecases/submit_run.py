"""Submitting a run: checked completely, then queued.

A run that is queued will be computed, so every input error the engine would raise must be
found here: candidates and plan are parsed, the series selection resolved to stored
versions, and the plan laid over each series by the engine's own preparation
(:func:`backtest.engine.planned_fold_count`: benchmark added, candidate checks, origins),
before any computation. The result carries the run's estimated cost
(:func:`backtest.cost.estimate_cost`: folds, model fits by family, result rows), which
``FOLDLINE_MAX_FOLDS``, ``FOLDLINE_MAX_RUN_FITS`` and ``FOLDLINE_MAX_RUN_ROWS`` bound; the
plan's horizon and levels are bounded first (``FOLDLINE_MAX_HORIZON``,
``FOLDLINE_MAX_LEVELS``).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import cast

from sqlalchemy.orm import Session, sessionmaker

from backtest.candidates import Candidate, parse_candidates
from backtest.cost import RunCost, estimate_cost
from backtest.errors import CandidateError, PlanError, SeriesError
from backtest.plan import Plan, parse_plan
from service.errors import (
    FieldError,
    InvalidInputError,
    InvalidSelectionError,
)
from service.http.schemas.runs import RunIn, SeriesSelection
from service.limits import MAX_SEED, check_candidate_count, check_cost, check_horizon_and_levels
from service.settings import Settings
from service.usecases.ownership import KeyHolder, check_writes
from service.usecases.quotas import check_quotas
from service.usecases.transactions import write
from storage.errors import ConflictError, NotFoundError
from storage.runs import RunInfo, queue_run, run_with_idempotency_key
from storage.series import VersionInfo, find_series, get_series, load_series


@dataclass(frozen=True)
class PreparedRun:
    """A submission that the engine will accept: versions, candidates, plan, its cost."""

    versions: tuple[VersionInfo, ...]
    candidates: tuple[Candidate, ...]
    plan: Plan
    cost: RunCost


def parse_request(body: RunIn, settings: Settings) -> tuple[tuple[Candidate, ...], Plan]:
    """The candidates and plan of a submission; errors point at the field at fault."""
    return parse_run_inputs([spec.model_dump() for spec in body.candidates], body.plan,
                            settings)


def parse_run_inputs(candidate_specs: object, plan_spec: object,
                     settings: Settings) -> tuple[tuple[Candidate, ...], Plan]:
    """Candidates and plan as the API and ``foldline backtest`` both take them: the same
    checks, limits and messages (candidates numbered from 1; the JSON pointer of the
    problem counts from 0, as RFC 6901 does)."""
    if isinstance(candidate_specs, list):
        check_candidate_count(len(candidate_specs), settings)
    try:
        # parse_candidates refuses anything but a list itself, with the API's words
        candidates = parse_candidates(cast(Iterable[object], candidate_specs))
    except CandidateError as exc:
        pointer = "/candidates" if exc.position is None else f"/candidates/{exc.position - 1}"
        raise exc.at(pointer) from None
    try:
        plan = parse_plan(plan_spec)
    except PlanError as exc:
        raise PlanError(str(exc)).at("/plan") from None
    if plan.seed > MAX_SEED:
        raise PlanError(f"plan seed must be at most {MAX_SEED} (the store keeps 32-bit "
                        f"signed seeds), got {plan.seed}").at("/plan/seed")
    check_horizon_and_levels(plan.horizon, len(plan.levels), settings, "/plan")
    return candidates, plan


def prepare_run(session: Session, body: RunIn, settings: Settings) -> PreparedRun:
    """Check a submission against the store and the limits."""
    candidates, plan = parse_request(body, settings)
    versions = selected_versions(session, body.series)
    series = [load_series(session, v.id) for v in versions]
    try:
        cost = estimate_cost(series, candidates, plan)
    except CandidateError as exc:
        raise CandidateError(str(exc)).at("/candidates") from None
    except (PlanError, SeriesError) as exc:
        raise PlanError(str(exc)).at("/plan") from None
    check_cost(cost, settings)
    return PreparedRun(tuple(versions), candidates, plan, cost)


def selected_versions(session: Session, selection: SeriesSelection) -> list[VersionInfo]:
    """The latest version of each selected series, in request (or key) order."""
    if selection.tags is not None:
        found = find_series(session, tags=selection.tags)
        if not found:
            raise _invalid(InvalidSelectionError, f"no series carries the tags {selection.tags}",
                           "/series/tags")
        return [s.latest for s in found]
    keys = selection.keys or []
    if len(set(keys)) != len(keys):
        raise _invalid(InvalidSelectionError, "a series key is listed twice", "/series/keys")
    versions = []
    for index, key in enumerate(keys):
        try:
            versions.append(get_series(session, key).latest)
        except NotFoundError:
            raise _invalid(InvalidSelectionError, f"series {key!r} does not exist",
                           f"/series/keys/{index}") from None
    return versions


def _invalid(kind: type[InvalidInputError], message: str, pointer: str) -> InvalidInputError:
    return kind(message, errors=[FieldError("body", pointer, message)])


def submit_run(sessions: sessionmaker[Session], body: RunIn, settings: Settings, *,
               caller: KeyHolder, idempotency_key: str | None) -> RunInfo:
    """Check a submission in a read transaction (parse, resolve the series, count each
    series' folds, estimate the cost), then queue what was checked in a short write
    transaction, so the store's write lock is never held while series are validated.

    A scoped caller selects only series under its scope; the caller's quotas are checked in
    the write transaction (a retry of a queued submission is not counted again)."""
    with sessions.begin() as session:
        prepared = prepare_run(session, body, settings)
    check_writes(caller, (v.series_key for v in prepared.versions))

    def queue(session: Session) -> RunInfo:
        if idempotency_key is None or run_with_idempotency_key(session,
                                                                idempotency_key) is None:
            check_quotas(session, caller.name, prepared.cost, settings)
        return queue_run(session, series_version_ids=[v.id for v in prepared.versions],
                         candidates=prepared.candidates, plan=prepared.plan,
                         actor=caller.name, idempotency_key=idempotency_key,
                         unit_folds=prepared.cost.unit_folds,
                         estimated_fits=prepared.cost.total_fits)

    try:
        return write(sessions, queue)
    except ConflictError:
        if idempotency_key is None:
            raise
        # The same key submitted twice at once: the loser finds the winner's run.
        return write(sessions, queue)
