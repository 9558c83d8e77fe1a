"""The ranking for BI tools: a flat table of every series' candidates on its latest run."""

from __future__ import annotations

from typing import TYPE_CHECKING, Annotated, Any, Literal

from fastapi import APIRouter, Depends, Query, Request, Response

from backtest.score_registry import RANKABLE, level_rule
from service.errors import FieldError, InvalidInputError
from service.http.access import Caller, require
from service.http.app_state import Rankings, Sessions
from service.http.problems import problem_responses
from service.http.routes.params import AsOfParam, PooledByDefault, TagFilter, horizon_or_pooled
from service.http.schemas.results import RankingPage, RankingRow, columns
from service.http.tables import (
    FormatParam,
    Limit,
    Offset,
    chosen_format,
    csv_openapi,
    csv_response,
    link_headers,
    next_link,
)
from service.moments import point_in_time
from service.usecases.results import latest_ranking

router = APIRouter(prefix="/v1", tags=["rankings"])
Reader = Annotated[Caller, Depends(require("read"))]
if TYPE_CHECKING:  # the checker cannot read a Literal made from a runtime tuple
    Metric = str
else:  # from a runtime tuple: values and docs never drift
    Metric = Literal[RANKABLE]


@router.get("/rankings", response_model=RankingPage,
            responses={**csv_openapi(columns(RankingRow)),
                       **problem_responses(401, 403, 406, 422, 500, 503)})
def rankings(request: Request, response: Response, caller: Reader, sessions: Sessions,
             cache: Rankings, tag: TagFilter, output: FormatParam = None,
             metric: Metric = "mase", horizon: PooledByDefault = "pooled",
             level: Annotated[int | None, Query(ge=1, le=99,
                                                description="for winkler and msis; "
                                                            "pinball takes one or none")] = None,
             prefix: Annotated[str | None, Query(max_length=200)] = None,
             as_of: AsOfParam = None, limit: Limit = 1000, offset: Offset = 0) -> Any:
    """For each series, its candidates ranked on its latest successful run (finished by
    ``as_of``, if given) by one score (lower is better; ties share a rank; unscored
    candidates last). One row per series and candidate, ordered by series key and rank:
    load it as it is."""
    chosen = chosen_format(request, output)
    _check_level(metric, level)
    pooled = horizon_or_pooled(horizon)
    moment = point_in_time("as_of", as_of, day_end=True)
    table = latest_ranking(sessions, cache, metric=metric, horizon=pooled, level=level,
                           prefix=prefix, tags=tag, as_of=moment)
    link = next_link(request, offset, limit, len(table) > offset + limit)
    rows = table[offset:offset + limit]
    if chosen == "csv":
        return csv_response(rows, columns(RankingRow), link)
    link_headers(response, link)
    return RankingPage(items=[RankingRow(**row) for row in rows], next=link)


def _check_level(metric: str, level: int | None) -> None:
    rule = level_rule(metric)
    if rule == "optional":
        return
    if (rule == "required") != (level is not None):
        message = (f"{metric} is scored per interval level: give level" if level is None
                   else f"{metric} has no interval level: leave level out")
        raise InvalidInputError(message, errors=[FieldError("query", "/level", message)])
