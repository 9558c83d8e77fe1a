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

from dataclasses import dataclass

from sqlalchemy.orm import Session, sessionmaker

from backtest.candidates import Candidate, parse_candidate
from backtest.cost import RunCost, estimate_cost
from backtest.errors import CandidateError, PlanError, SeriesError
from backtest.plan import Plan, parse_plan
from service.errors import (
    FieldError,
    InvalidInputError,
    InvalidSelectionError,
    LimitExceededError,
)
from service.http.schemas.runs import RunIn, SeriesSelection
from service.settings import Settings
from service.usecases.transactions import write
from storage.errors import ConflictError, NotFoundError
from storage.runs import RunInfo, queue_run
from storage.series import VersionInfo, find_series, get_series, load_series

MAX_SEED = 2**31 - 1


@dataclass(frozen=True)
class PreparedRun:
    """A submission that the engine will accept: versions, candidates, plan, its cost."""

    versions: tuple[VersionInfo, ...]
    candidates: tuple[Candidate, ...]
    plan: Plan
    cost: RunCost


def parse_request(body: RunIn, settings: Settings) -> tuple[tuple[Candidate, ...], Plan]:
    """The candidates and plan of a submission; errors point at the field at fault."""
    if len(body.candidates) > settings.max_candidates:
        raise LimitExceededError(
            f"the run lists {len(body.candidates)} candidates; at most "
            f"{settings.max_candidates} are accepted (FOLDLINE_MAX_CANDIDATES)",
            errors=[FieldError("body", "/candidates", "too many candidates")])
    candidates: list[Candidate] = []
    for index, spec in enumerate(body.candidates):
        candidate = _candidate(spec.model_dump(), index)
        if any(c.id == candidate.id for c in candidates):
            raise CandidateError(f"candidate {index} repeats an earlier one").at(
                f"/candidates/{index}")
        candidates.append(candidate)
    try:
        plan = parse_plan(body.plan)
    except PlanError as exc:
        raise PlanError(str(exc)).at("/plan") from None
    if plan.seed > MAX_SEED:
        raise PlanError(f"plan seed must be at most {MAX_SEED} (the store keeps 32-bit "
                        f"signed seeds), got {plan.seed}").at("/plan/seed")
    check_horizon_and_levels(plan.horizon, len(plan.levels), settings, "/plan")
    return tuple(candidates), plan


def check_horizon_and_levels(horizon: int, levels: int, settings: Settings,
                             pointer: str) -> None:
    """Refuse a horizon or a number of interval levels beyond the settings."""
    if horizon > settings.max_horizon:
        raise LimitExceededError(
            f"the horizon is {horizon} steps; at most {settings.max_horizon} are accepted "
            "(FOLDLINE_MAX_HORIZON)", errors=[FieldError("body", f"{pointer}/horizon",
                                                         "horizon too long")],
            estimate={"horizon": horizon}, limit={"horizon": settings.max_horizon})
    if levels > settings.max_levels:
        raise LimitExceededError(
            f"{levels} interval levels are asked for; at most {settings.max_levels} are "
            "accepted (FOLDLINE_MAX_LEVELS)",
            errors=[FieldError("body", f"{pointer}/levels", "too many levels")],
            estimate={"levels": levels}, limit={"levels": settings.max_levels})


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


def check_cost(cost: RunCost, settings: Settings) -> None:
    """Refuse a run whose estimated cost exceeds a limit; the problem shows both."""
    limits = {"folds": settings.max_folds, "total_fits": settings.max_run_fits,
              "rows": settings.max_run_rows}
    estimate = cost.to_dict()
    over = [name for name, limit in limits.items() if estimate[name] > limit]
    if not over:
        return
    parts = {"folds": f"{cost.folds} folds (series x candidates x origins, the benchmark "
                      f"included; at most {settings.max_folds}, FOLDLINE_MAX_FOLDS)",
             "total_fits": f"{cost.total_fits} model fits (at most {settings.max_run_fits}, "
                           "FOLDLINE_MAX_RUN_FITS)",
             "rows": f"{cost.rows} result rows (at most {settings.max_run_rows}, "
                     "FOLDLINE_MAX_RUN_ROWS)"}
    raise LimitExceededError(
        "the run would compute " + " and ".join(parts[name] for name in over)
        + ": select fewer series or candidates, a shorter horizon or fewer levels, or set "
        "max_origins or a less frequent refit; nothing was queued",
        errors=[FieldError("body", "", f"too many {name.replace('total_', '')}")
                for name in over],
        estimate=estimate, limit=limits)


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


def _candidate(spec: dict, index: int) -> Candidate:
    try:
        return parse_candidate(spec)
    except CandidateError as exc:
        raise CandidateError(f"candidate {index}: {exc}").at(f"/candidates/{index}") from None


def _invalid(kind: type[InvalidInputError], message: str, pointer: str) -> InvalidInputError:
    return kind(message, errors=[FieldError("body", pointer, message)])


def submit_run(sessions: sessionmaker[Session], body: RunIn, settings: Settings, *,
               actor: str, idempotency_key: str | None) -> RunInfo:
    """Check a submission in a read transaction (parse, resolve the series, count each
    series' folds, estimate the cost), then queue what was checked in a short write
    transaction, so the store's write lock is never held while series are validated."""
    with sessions.begin() as session:
        prepared = prepare_run(session, body, settings)

    def queue(session: Session) -> RunInfo:
        return queue_run(session, series_version_ids=[v.id for v in prepared.versions],
                         candidates=prepared.candidates, plan=prepared.plan, actor=actor,
                         idempotency_key=idempotency_key, unit_folds=prepared.cost.unit_folds)

    try:
        return write(sessions, queue)
    except ConflictError:
        if idempotency_key is None:
            raise
        # The same key submitted twice at once: the loser finds the winner's run.
        return write(sessions, queue)
