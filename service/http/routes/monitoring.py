"""Monitoring: a series' realised accuracy beside its backtest's expectation, with flags;
and the flags of every series' champion as one table."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Depends, Query, Request, Response

from service.http.access import Caller, require
from service.http.app_state import Sessions
from service.http.problems import problem_responses
from service.http.routes.params import AsOfParam
from service.http.schemas.champions import CANDIDATE_ID
from service.http.schemas.monitoring import (
    STATE_HELP,
    FlagPage,
    FlagRow,
    MonitoringOut,
    RealisedRow,
    State,
)
from service.http.schemas.results import columns
from service.http.tables import (
    FormatParam,
    Offset,
    chosen_format,
    csv_openapi,
    csv_response,
    link_headers,
    next_link,
)
from service.moments import point_in_time
from service.usecases.monitoring import monitor_champions, monitor_series
from service.views.ledger_answers import flag_rows, monitoring_out, realised_rows

router = APIRouter(prefix="/v1", tags=["monitoring"])
Reader = Annotated[Caller, Depends(require("read"))]
ERRORS = (401, 403, 406, 422, 500, 503)
MAX_SERIES = 1000


@router.get("/series/{key:path}/monitoring", response_model=MonitoringOut,
            responses={**csv_openapi(columns(RealisedRow)), **problem_responses(*ERRORS, 404)})
def read_monitoring(key: str, request: Request, caller: Reader, sessions: Sessions,
                    output: FormatParam = None,
                    candidate_id: Annotated[str | None, Query(
                        pattern=CANDIDATE_ID, description="default: the series' champion")
                    ] = None,
                    as_of: AsOfParam = None) -> Any:
    """Realised accuracy of the candidate's issued forecasts by target period, the
    backtest's expectation for the same horizons, and the coverage, accuracy and level
    shift flags, as they stood at ``as_of`` if given. CSV: the realised accuracy, one row per
    period and level."""
    chosen = chosen_format(request, output)
    moment = point_in_time("as_of", as_of, day_end=True)
    with sessions.begin() as session:
        answer = monitoring_out(monitor_series(session, key, candidate_id, moment))
    if chosen == "csv":
        return csv_response(realised_rows(answer), columns(RealisedRow), None)
    return answer


@router.get("/monitoring", response_model=FlagPage,
            responses={**csv_openapi(columns(FlagRow)), **problem_responses(*ERRORS)})
def list_flags(request: Request, response: Response, caller: Reader, sessions: Sessions,
               output: FormatParam = None,
               prefix: Annotated[str | None, Query(max_length=200)] = None,
               state: Annotated[State | None, Query(
                   description=f"only flags in this state ({STATE_HELP})")] = None,
               limit: Annotated[int, Query(ge=1, le=MAX_SERIES, description=(
                   "series per page (each gives one row per rule and level)"))] = 100,
               offset: Offset = 0, as_of: AsOfParam = None) -> Any:
    """Every monitoring rule's verdict on every series' champion, by series key, a page of
    ``limit`` series at a time (``next`` links the following page); as they stood at
    ``as_of`` if given."""
    chosen = chosen_format(request, output)
    moment = point_in_time("as_of", as_of, day_end=True)
    with sessions.begin() as session:
        reports, more = monitor_champions(session, prefix, offset=offset, limit=limit,
                                          as_of=moment)
    link = next_link(request, offset, limit, more)
    rows = [row for m in reports for row in flag_rows(m)
            if state is None or row["state"] == state]
    if chosen == "csv":
        return csv_response(rows, columns(FlagRow), link)
    link_headers(response, link)
    return FlagPage(items=[FlagRow(**row) for row in rows], next=link)
