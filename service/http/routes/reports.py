"""A run's report as one self-contained HTML page, rendered once and then served from the cache."""

from __future__ import annotations

from typing import Annotated

from fastapi import APIRouter, Depends
from fastapi.responses import HTMLResponse

from service.http.access import Caller, require
from service.http.app_state import AppSettings, Sessions
from service.http.problems import problem_responses
from service.http.routes.params import Id
from service.views.report.prerender import settings_report_cache
from service.views.report.stored import stored_run_report

router = APIRouter(prefix="/v1", tags=["reports"])
Reader = Annotated[Caller, Depends(require("read"))]
#: The report loads nothing from anywhere: no scripts, styles inline, charts inline SVG.
REPORT_HEADERS = {"Content-Security-Policy": "default-src 'none'; style-src 'unsafe-inline'",
                  "X-Content-Type-Options": "nosniff", "Cache-Control": "private, no-cache"}


def report_response(html: str) -> HTMLResponse:
    """A report page with headers that keep it self-contained."""
    return HTMLResponse(html, headers=REPORT_HEADERS)


@router.get("/runs/{run_id}/report", response_class=HTMLResponse,
            responses={200: {"content": {"text/html": {"schema": {"type": "string"}}},
                             "description": "the report: one HTML document that prints on A4"},
                       **problem_responses(401, 403, 404, 409, 422, 500, 503)})
def run_report(run_id: Id, caller: Reader, sessions: Sessions,
               settings: AppSettings) -> HTMLResponse:
    """A finished run's report: what was run, the rankings with the ratio to the benchmark,
    significance and confidence sets, calibration, diagnostics, failed folds, warnings and
    cautions, with every chart inline; a run of more than 25 series gets a line per series,
    then the first 25 in full. The worker that finished the run renders it ahead
    (``FOLDLINE_PRERENDER_REPORTS``); otherwise the first request renders it (up to about a
    minute). Later ones are served from the cache. 409 while the run is queued or running."""
    return report_response(stored_run_report(sessions, run_id, settings_report_cache(settings)))
