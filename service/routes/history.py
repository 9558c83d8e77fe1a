"""History for auditors: scores across runs, runs of a series version, the audit log."""

from __future__ import annotations

from typing import Annotated

from fastapi import APIRouter, Depends, Query, Request, Response

from service.access import Caller, require
from service.app_state import Sessions
from service.moments import MOMENT_HELP, Moment
from service.problems import problem_responses
from service.routes.params import PooledByDefault, horizon_or_pooled
from service.routes.runs import run_url
from service.schemas.common import MAX_ID
from service.schemas.history import (
    AuditEventOut,
    AuditEventPage,
    RunSummaryOut,
    ScoreHistoryOut,
    ScorePointOut,
    VerificationOut,
    VersionRunsOut,
)
from service.tables import Limit, link_headers
from storage.audit_pages import audit_page
from storage.queries import runs_using_version, score_history
from storage.series_catalog import get_series, version_by_number
from storage.verify import verify_audit_log

router = APIRouter(prefix="/v1", tags=["history"])
Auditor = Annotated[Caller, Depends(require("audit"))]
ERRORS = (401, 403, 422, 500, 503)
SeriesKeyParam = Annotated[str, Query(min_length=1, max_length=200)]


@router.get("/history/scores", response_model=ScoreHistoryOut,
            responses=problem_responses(*ERRORS, 404))
def scores_over_time(caller: Auditor, sessions: Sessions, series_key: SeriesKeyParam,
                     candidate_id: Annotated[str, Query(min_length=1, max_length=17)],
                     metric: Annotated[str, Query(max_length=32)] = "mase",
                     horizon: PooledByDefault = "pooled",
                     level: Annotated[int | None, Query(ge=1, le=99)] = None
                     ) -> ScoreHistoryOut:
    """A candidate's score on a series in every successful run, oldest first."""
    chosen = horizon_or_pooled(horizon)
    with sessions.begin() as session:
        get_series(session, series_key)
        points = score_history(session, series_key, candidate_id, metric=metric,
                               horizon=chosen, level=level)
    return ScoreHistoryOut(
        series_key=series_key, candidate_id=candidate_id, metric=metric, horizon=chosen,
        level=level, points=[ScorePointOut(run_id=p.run_id, run_url=run_url(p.run_id),
                                           finished_at=p.finished_at,
                                           series_version=p.version_number, value=p.value,
                                           count=p.count) for p in points])


@router.get("/history/version-runs", response_model=VersionRunsOut,
            responses=problem_responses(*ERRORS, 404))
def runs_of_version(caller: Auditor, sessions: Sessions, series_key: SeriesKeyParam,
                    version: Annotated[int, Query(ge=1, le=MAX_ID)]) -> VersionRunsOut:
    """Every run that used one version of a series."""
    with sessions.begin() as session:
        runs = runs_using_version(session, version_by_number(session, series_key, version).id)
    return VersionRunsOut(series_key=series_key, version=version, runs=[
        RunSummaryOut(id=r.id, url=run_url(r.id), status=r.status,
                      requested_by=r.requested_by, queued_at=r.queued_at,
                      finished_at=r.finished_at) for r in runs])


@router.get("/audit/events", response_model=AuditEventPage, responses=problem_responses(*ERRORS))
def audit_events(request: Request, response: Response, caller: Auditor, sessions: Sessions,
                 start: Annotated[Moment | None, Query(
                     description=f"from (inclusive): {MOMENT_HELP}")] = None,
                 end: Annotated[Moment | None, Query(
                     description=f"before (exclusive): {MOMENT_HELP}")] = None,
                 after: Annotated[int, Query(ge=0, le=MAX_ID,
                                             description="only events after this seq")]
                 = 0, limit: Limit = 1000) -> AuditEventPage:
    """Audit events in a time range, in log order; page on with ``after``."""
    with sessions.begin() as session:
        events = audit_page(session, start=start, end=end, after_seq=after,
                            limit=limit + 1)
    link = None
    if len(events) > limit:
        query = request.url.include_query_params(after=events[limit - 1].seq).query
        link = f"{request.url.path}?{query}"
    link_headers(response, link)
    return AuditEventPage(items=[AuditEventOut(**vars(e)) for e in events[:limit]], next=link)


@router.get("/audit/verification", response_model=VerificationOut,
            responses=problem_responses(*ERRORS))
def verification(caller: Auditor, sessions: Sessions) -> VerificationOut:
    """Check the whole hash chain and the stored content it vouches for (reads everything)."""
    with sessions.begin() as session:
        report = verify_audit_log(session)
    return VerificationOut(ok=report.ok, events_checked=report.events_checked,
                           head_hash=report.head_hash, broken_at=report.broken_at,
                           problem=report.problem)

