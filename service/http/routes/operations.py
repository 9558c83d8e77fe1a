"""Operations: liveness, readiness and metrics; open to all, like a load balancer's probes."""

from __future__ import annotations

from fastapi import APIRouter, Request
from fastapi.responses import PlainTextResponse

from service.http.app_state import Sessions
from service.http.problems import problem_responses
from service.http.prometheus import CONTENT_TYPE, store_exposition
from service.http.schemas.operations import Liveness, Readiness
from service.usecases.store_status import ready_revision, work_counts

router = APIRouter(tags=["operations"])


@router.get("/health/live", response_model=Liveness, responses=problem_responses(500))
def live() -> Liveness:
    """The process answers (it checks nothing else)."""
    return Liveness(status="alive")


@router.get("/health/ready", response_model=Readiness, responses=problem_responses(503))
def ready(sessions: Sessions) -> Readiness:
    """The database answers and is migrated to this code's schema."""
    return Readiness(status="ready", schema_revision=ready_revision(sessions))


@router.get("/metrics", response_class=PlainTextResponse, responses={200: {
    "content": {CONTENT_TYPE: {"schema": {"type": "string"}}},
    "description": "Prometheus text exposition format"}, **problem_responses(500, 503)})
def metrics(request: Request, sessions: Sessions) -> PlainTextResponse:
    """Request counts of this process, and queue and run counts from the store."""
    counts, folds = work_counts(sessions)
    lines = request.app.state.request_metrics.exposition() + store_exposition(counts, folds)
    return PlainTextResponse("\n".join(lines) + "\n", media_type=CONTENT_TYPE)
