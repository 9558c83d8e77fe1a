"""History for auditors: scores across runs, runs of a series version, the audit log."""

from __future__ import annotations

from typing import TYPE_CHECKING, Annotated, Any, Literal

from fastapi import APIRouter, Depends, Query, Request, Response

from backtest.score_registry import DISTRIBUTION_METRICS, LEVEL_METRICS, POINT_METRICS
from service.http.access import Caller, require
from service.http.app_state import Sessions, Verifications
from service.http.flat_rows import flat_columns, flat_rows
from service.http.problems import problem_responses
from service.http.routes.params import PooledByDefault, horizon_or_pooled
from service.http.routes.runs import run_url
from service.http.schemas.history import (
    AuditEventOut,
    AuditEventPage,
    RunSummaryOut,
    ScoreHistoryOut,
    ScorePointOut,
    VerificationOut,
    VersionRunsOut,
)
from service.http.tables import (
    FormatParam,
    Limit,
    chosen_format,
    csv_openapi,
    csv_response,
    link_headers,
)
from service.limits import MAX_ID
from service.moments import MOMENT_HELP, point_in_time
from service.usecases import audit_trail

router = APIRouter(prefix="/v1", tags=["history"])
Auditor = Annotated[Caller, Depends(require("audit"))]
ERRORS = (401, 403, 422, 500, 503)
SeriesKeyParam = Annotated[str, Query(min_length=1, max_length=200)]
if TYPE_CHECKING:  # the checker cannot read a Literal made from a runtime tuple
    ScoreMetric = str
else:  # from a runtime tuple: values and docs never drift
    ScoreMetric = Literal[POINT_METRICS + DISTRIBUTION_METRICS + LEVEL_METRICS]


@router.get("/history/scores", response_model=ScoreHistoryOut,
            responses={**csv_openapi(flat_columns(ScorePointOut)),
                       **problem_responses(*ERRORS, 404, 406)})
def scores_over_time(request: Request, caller: Auditor, sessions: Sessions,
                     series_key: SeriesKeyParam,
                     candidate_id: Annotated[str, Query(min_length=1, max_length=17)],
                     output: FormatParam = None, metric: ScoreMetric = "mase",
                     horizon: PooledByDefault = "pooled",
                     level: Annotated[int | None, Query(ge=1, le=99)] = None) -> Any:
    """A candidate's score on a series in every successful run, oldest first. CSV: one row
    per run."""
    chosen_output = chosen_format(request, output)
    chosen = horizon_or_pooled(horizon)
    points = audit_trail.scores_over_runs(sessions, series_key, candidate_id, metric=metric,
                              horizon=chosen, level=level)
    outs = [ScorePointOut(run_id=p.run_id, run_url=run_url(p.run_id), finished_at=p.finished_at,
                          series_version=p.version_number, value=p.value, count=p.count)
            for p in points]
    if chosen_output == "csv":
        return csv_response(flat_rows(outs), flat_columns(ScorePointOut), None)
    return ScoreHistoryOut(series_key=series_key, candidate_id=candidate_id, metric=metric,
                           horizon=chosen, level=level, points=outs)


@router.get("/history/version-runs", response_model=VersionRunsOut,
            responses={**csv_openapi(flat_columns(RunSummaryOut)),
                       **problem_responses(*ERRORS, 404, 406)})
def runs_of_version(request: Request, caller: Auditor, sessions: Sessions,
                    series_key: SeriesKeyParam, version: Annotated[int, Query(ge=1, le=MAX_ID)],
                    output: FormatParam = None) -> Any:
    """Every run that used one series version. CSV: one row per run."""
    chosen = chosen_format(request, output)
    runs = audit_trail.runs_of_version(sessions, series_key, version)
    outs = [RunSummaryOut(id=r.id, url=run_url(r.id), status=r.status,
                          requested_by=r.requested_by, queued_at=r.queued_at,
                          finished_at=r.finished_at) for r in runs]
    if chosen == "csv":
        return csv_response(flat_rows(outs), flat_columns(RunSummaryOut), None)
    return VersionRunsOut(series_key=series_key, version=version, runs=outs)


@router.get("/audit/events", response_model=AuditEventPage,
            responses={**csv_openapi(flat_columns(AuditEventOut)),
                       **problem_responses(*ERRORS, 406)})
def audit_events(request: Request, response: Response, caller: Auditor, sessions: Sessions,
                 output: FormatParam = None,
                 start: Annotated[str | None, Query(
                     description=f"from (inclusive): {MOMENT_HELP}")] = None,
                 end: Annotated[str | None, Query(
                     description=f"before (exclusive): {MOMENT_HELP}")] = None,
                 after: Annotated[int, Query(ge=0, le=MAX_ID,
                                             description="only events after this seq")]
                 = 0, limit: Limit = 1000) -> Any:
    """Audit events in a time range, in log order; page on with ``after``. Each names its
    subject by id and in words (``subject_label``)."""
    chosen = chosen_format(request, output)
    window = point_in_time("start", start), point_in_time("end", end)
    events, described = audit_trail.audit_events(sessions, start=window[0], end=window[1],
                                     after_seq=after, limit=limit + 1)
    link = None
    if len(events) > limit:
        query = request.url.include_query_params(after=events[limit - 1].seq).query
        link = f"{request.url.path}?{query}"
    items = [AuditEventOut(**vars(e), subject_label=described[e.subject])
             for e in events[:limit]]
    if chosen == "csv":
        return csv_response(flat_rows(items), flat_columns(AuditEventOut), link)
    link_headers(response, link)
    return AuditEventPage(items=items, next=link)


@router.get("/audit/verification", response_model=VerificationOut,
            responses=problem_responses(*ERRORS))
def verification(caller: Auditor, verifier: Verifications) -> VerificationOut:
    """Check the hash chain and the stored content it vouches for, from the last verified
    head on; one verification at a time (a concurrent call gets the running one's answer).
    The full pass over the whole store is ``foldline audit verify``."""
    report = verifier.verify()
    return VerificationOut(ok=report.ok, mode=report.mode, from_seq=report.from_seq,
                           events_checked=report.events_checked, head_seq=report.head_seq,
                           head_hash=report.head_hash, keyed_from=report.keyed_from,
                           broken_at=report.broken_at, problem=report.problem)

