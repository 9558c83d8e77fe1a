"""Runs: submit (queued, answered 202), list, read status and progress, cancel."""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Annotated, Any, Literal, cast

from fastapi import APIRouter, Depends, Header, Query, Request, Response

from service.http.access import Caller, require
from service.http.app_state import AppSettings, Sessions
from service.http.flat_rows import flat_columns, flat_rows
from service.http.problems import problem_responses
from service.http.routes.params import Id
from service.http.routes.series import series_url
from service.http.schemas.runs import (
    ProgressOut,
    RunCandidateOut,
    RunIn,
    RunLinks,
    RunOut,
    RunPage,
    RunSeriesOut,
    RunStatus,
    TimingsOut,
)
from service.http.tables import FormatParam, chosen_format, csv_openapi, csv_response, link_headers
from service.limits import MAX_RUNS_PAGE
from service.usecases import runs as run_cases
from service.usecases import submit_run as submission
from service.usecases.runs import RunInfo, RunView

router = APIRouter(prefix="/v1", tags=["runs"])
Writer = Annotated[Caller, Depends(require("write"))]
Canceller = Annotated[Caller, Depends(require("cancel"))]
Reader = Annotated[Caller, Depends(require("read"))]
ERRORS = (401, 403, 422, 500, 503)
IdempotencyKey = Annotated[str | None, Header(
    alias="Idempotency-Key", min_length=1, max_length=100, pattern=r"^[\x21-\x7e]+$",
    description="retrying a submission with the same key returns the original run")]


def run_url(run_id: int) -> str:
    """The URL of a run."""
    return f"/v1/runs/{run_id}"


@router.post("/runs", status_code=202, response_model=RunOut,
             responses=problem_responses(*ERRORS, 409, 413, 429))
def submit_run(body: RunIn, response: Response, caller: Writer, sessions: Sessions,
               settings: AppSettings, idempotency_key: IdempotencyKey = None) -> RunOut:
    """Queue a backtest; a worker computes it. The answer names the run's URL. A scoped key
    selects only series under its scope (403); a key past one of its quotas (runs waiting,
    fits per period) is answered 429 with Retry-After."""
    scoped = f"{caller.key_id}:{idempotency_key}" if idempotency_key else None
    run = submission.submit_run(sessions, body, settings, caller=caller,
                                idempotency_key=scoped)
    response.headers["Location"] = run_url(run.id)
    return run_out(run_cases.read_run(sessions, run.id))


@router.get("/runs", response_model=RunPage,
            responses={**csv_openapi(flat_columns(RunOut)), **problem_responses(*ERRORS, 406)})
def list_all_runs(
        request: Request, response: Response, caller: Reader, sessions: Sessions,
        output: FormatParam = None,
        status: Annotated[Literal["queued", "running", "succeeded", "failed", "cancelled"]
                          | None, Query(description="only runs in this state")] = None,
        series_key: Annotated[str | None, Query(
            min_length=1, max_length=200, description="only runs that include this series")] = None,
        requested_by: Annotated[str | None, Query(
            min_length=1, max_length=200, description="only runs this key name queued")] = None,
        finished_from: Annotated[datetime | None, Query(
            description="only runs finished at or after this ISO 8601 time")] = None,
        finished_to: Annotated[datetime | None, Query(
            description="only runs finished before this ISO 8601 time")] = None,
        before: Annotated[int | None, Query(ge=1, description=(
            "cursor: only runs with a smaller id (the ``next`` link sets it)"))] = None,
        limit: Annotated[int, Query(ge=1, le=MAX_RUNS_PAGE)] = 50) -> Any:
    """Runs, newest first, filtered; paged by a cursor so pages stay put as runs arrive.
    CSV: one row per run (lists as JSON cells)."""
    chosen = chosen_format(request, output)
    views, more = run_cases.run_views(sessions, status=status, series_key=series_key,
                            requested_by=requested_by, finished_from=finished_from,
                            finished_to=finished_to, before=before, limit=limit)
    items = [run_out(view) for view in views]
    link = None
    if more:
        query = request.url.include_query_params(before=views[-1].run.id, limit=limit).query
        link = f"{request.url.path}?{query}"
    if chosen == "csv":
        return csv_response(flat_rows(items), flat_columns(RunOut), link)
    link_headers(response, link)
    return RunPage(items=items, next=link)


@router.get("/runs/{run_id}", response_model=RunOut, responses=problem_responses(*ERRORS, 404))
def read_run(run_id: Id, caller: Reader, sessions: Sessions) -> RunOut:
    """A run's status, progress, timings and an estimate of the time left."""
    return run_out(run_cases.read_run(sessions, run_id))


@router.post("/runs/{run_id}/cancel", response_model=RunOut,
             responses={202: {"model": RunOut, "description": "cancel requested: the worker "
                              "stops the run after its task in progress"},
                        **problem_responses(*ERRORS, 404, 409)})
def cancel_run(run_id: Id, response: Response, caller: Canceller,
               sessions: Sessions) -> RunOut:
    """Cancel a run. A queued run (or one no worker holds) is cancelled at once (200); a
    running one when its worker finishes the task in progress, within seconds (202).
    Finished runs: 409. Admins cancel any run; a submitter its own runs and those on series
    under its scope (403 otherwise)."""
    answer = run_out(run_cases.cancel_run(sessions, run_id, caller=caller))
    response.status_code = 200 if answer.status == "cancelled" else 202
    return answer


def run_out(view: RunView) -> RunOut:
    """The answer describing a run."""
    run, versions, labels = view.run, view.versions, view.labels
    url = run_url(run.id)
    return RunOut(
        id=run.id, url=url, status=cast(RunStatus, run.status),  # as stored; validated
        requested_by=run.requested_by,
        idempotency_key=run.idempotency_key.split(":", 1)[1] if run.idempotency_key else None,
        plan_id=run.plan_id, seed=run.seed, attempts=run.attempts,
        failure_reason=run.failure_reason, cancel_requested_by=view.cancel_requested_by,
        progress=_progress(run), timings=_timings(run),
        series=[RunSeriesOut(key=v.series_key, version=v.number, url=series_url(v.series_key))
                for v in versions],
        candidate_ids=list(run.candidate_ids),
        candidates=[RunCandidateOut(id=c, label=labels[c]) for c in run.candidate_ids],
        links=RunLinks(scores=f"{url}/scores", folds=f"{url}/folds",
                       ranking=f"{url}/ranking", diagnostics=f"{url}/diagnostics",
                       evidence=f"{url}/evidence", report=f"{url}/report"))


def _progress(run: RunInfo) -> ProgressOut:
    total = run.folds_total
    fraction = run.folds_done / total if total else None
    return ProgressOut(folds_done=run.folds_done, folds_total=total, fraction=fraction)


def _timings(run: RunInfo) -> TimingsOut:
    now = datetime.now(UTC)
    left = None
    if run.status == "running" and run.started_at and run.folds_total and run.folds_done:
        per_fold = _seconds(run.started_at, now) / run.folds_done
        left = per_fold * max(run.folds_total - run.folds_done, 0)
    return TimingsOut(
        queued_at=run.queued_at, started_at=run.started_at, finished_at=run.finished_at,
        waited_seconds=_seconds(run.queued_at, run.started_at) if run.started_at else None,
        ran_seconds=_seconds(run.started_at, run.finished_at or now) if run.started_at else None,
        estimated_seconds_left=left)


def _seconds(start: datetime, end: datetime) -> float:
    return (end - start).total_seconds()
