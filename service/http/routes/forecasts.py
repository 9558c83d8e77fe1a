"""The forecast ledger: issue a forecast, list and read issued forecasts and their outcomes.

Issued forecasts and outcomes are records: no route changes or deletes them.
"""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Depends, Query, Request, Response

from service.http.access import Caller, require
from service.http.app_state import AppSettings, Sessions
from service.http.problems import problem_responses
from service.http.routes.params import AsOfParam, Id
from service.http.schemas.forecasts import (
    ForecastIn,
    ForecastOut,
    ForecastPage,
    ForecastRow,
    OutcomeRow,
    OutcomesOut,
)
from service.http.schemas.results import columns
from service.http.tables import FormatParam, Limit, chosen_format, csv_openapi, csv_response
from service.limits import MAX_ID
from service.moments import MOMENT_HELP, point_in_time
from service.usecases import forecasts
from service.usecases.issue_forecast import IssueRequest, issue
from service.usecases.ownership import check_writes
from service.views.ledger_answers import (
    forecast_out,
    forecast_rows,
    forecast_url,
    outcome_rows,
    outcome_set_out,
)

router = APIRouter(prefix="/v1", tags=["forecasts"])
Writer = Annotated[Caller, Depends(require("write"))]
Reader = Annotated[Caller, Depends(require("read"))]
ERRORS = (401, 403, 422, 500, 503)


@router.post("/forecasts", status_code=201, response_model=ForecastOut,
             responses={200: {"model": ForecastOut, "description": "identical inputs were "
                              "issued before: that forecast"},
                        **problem_responses(*ERRORS, 409, 413)})
def issue_forecast(body: ForecastIn, response: Response, caller: Writer,
                   sessions: Sessions, settings: AppSettings) -> ForecastOut:
    """Fit the series' champion (or the named candidate) on all data of a version (default:
    the latest) and record its forecast in the ledger (201). Identical inputs answer the
    forecast issued before (200)."""
    check_writes(caller, [body.series_key])
    request = IssueRequest(series_key=body.series_key, horizon=body.horizon,
                           levels=tuple(body.levels), seed=body.seed, version=body.version,
                           candidate_id=body.candidate_id)
    record, created = issue(sessions, request, settings, actor=caller.name)
    issued = forecasts.issued_forecast(sessions, record.forecast_id)
    answer = forecast_out(issued.record, issued.version)
    response.status_code = 201 if created else 200
    response.headers["Location"] = answer.url
    return answer


@router.get("/forecasts", response_model=ForecastPage,
            responses={**csv_openapi(columns(ForecastRow)),
                       **problem_responses(*ERRORS, 406)})
def list_forecasts(request: Request, response: Response, caller: Reader, sessions: Sessions,
                   output: FormatParam = None,
                   series_key: Annotated[str | None, Query(max_length=200)] = None,
                   candidate_id: Annotated[str | None, Query(max_length=17)] = None,
                   issued_from: Annotated[str | None, Query(
                       description=f"issued at or after: {MOMENT_HELP}")] = None,
                   issued_to: Annotated[str | None, Query(
                       description=f"issued before: {MOMENT_HELP}")] = None,
                   horizon: Annotated[int | None, Query(
                       ge=1, le=MAX_ID, description="only this step ahead")] = None,
                   after: Annotated[int, Query(ge=0, le=MAX_ID,
                                               description="forecast id to page after")] = 0,
                   as_of: AsOfParam = None, limit: Limit = 100) -> Any:
    """Issued forecasts, oldest first, filtered by series, candidate, issue time and step
    ahead, as the ledger stood at ``as_of`` if given; CSV has one row per forecast, step and
    level. Paged with ``after``."""
    chosen = chosen_format(request, output)
    moment = point_in_time("as_of", as_of, day_end=True)
    records = forecasts.issued_forecasts(
        sessions, series_key=series_key, candidate_id=candidate_id,
        issued_from=point_in_time("issued_from", issued_from),
        issued_to=point_in_time("issued_to", issued_to), as_of=moment, after_id=after,
        limit=limit + 1)
    items = [forecast_out(n.record, n.version) for n in records[:limit]]
    if horizon is not None:
        items = [_only_step(item, horizon) for item in items if item.horizon >= horizon]
    link = None
    if len(records) > limit:
        query = request.url.include_query_params(
            after=records[limit - 1].record.forecast_id).query
        link = f"{request.url.path}?{query}"
    if chosen == "csv":
        rows = (row for item in items for row in forecast_rows(item))
        return csv_response(rows, columns(ForecastRow), link)
    if link:
        response.headers["Link"] = f'<{link}>; rel="next"'
    return ForecastPage(items=items, next=link)


@router.get("/forecasts/{forecast_id}", response_model=ForecastOut,
            responses=problem_responses(*ERRORS, 404))
def read_forecast(forecast_id: Id, caller: Reader, sessions: Sessions) -> ForecastOut:
    """One issued forecast, as recorded."""
    issued = forecasts.issued_forecast(sessions, forecast_id)
    return forecast_out(issued.record, issued.version)


@router.get("/forecasts/{forecast_id}/outcomes", response_model=OutcomesOut,
            responses={**csv_openapi(columns(OutcomeRow)),
                       **problem_responses(*ERRORS, 404, 406)})
def read_outcomes(forecast_id: Id, request: Request, caller: Reader, sessions: Sessions,
                  output: FormatParam = None,
                  every: Annotated[bool, Query(alias="all", description="every set, one per "
                                               "series version scored against")] = False,
                  as_of: AsOfParam = None) -> Any:
    """What came true: the forecast's outcomes against the latest version scored so far, or
    with ``all`` every set (earlier versions kept their own); with ``as_of``, only the sets
    scored by then. Empty until actuals arrive."""
    chosen = chosen_format(request, output)
    moment = point_in_time("as_of", as_of, day_end=True)
    found = forecasts.forecast_outcomes(sessions, forecast_id, every=every, as_of=moment)
    forecast = forecast_out(found.forecast.record, found.forecast.version)
    sets = [outcome_set_out(s, number, s.series_version_id == found.current_version_id)
            for s, number in found.sets]
    if chosen == "csv":
        return csv_response(outcome_rows(forecast, sets), columns(OutcomeRow), None)
    return OutcomesOut(forecast_id=forecast_id, forecast_url=forecast_url(forecast_id),
                       series_key=forecast.series_key, candidate_id=forecast.candidate_id,
                       sets=sets)


def _only_step(item: ForecastOut, horizon: int) -> ForecastOut:
    return item.model_copy(update={"steps": [s for s in item.steps if s.horizon == horizon]})
