"""A run's results: scores, folds (paged), its ranking, diagnostics and evidence; JSON or CSV.

While a run is running these show the series finished so far; once it has succeeded, all.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING, Annotated, Any, Literal

from fastapi import APIRouter, Depends, Query, Request, Response
from pydantic import BaseModel

from backtest.score_registry import DISTRIBUTION_METRICS, LEVEL_METRICS, POINT_METRICS
from service.http.access import Caller, require
from service.http.app_state import Sessions
from service.http.flatten import flatten
from service.http.problems import problem_responses
from service.http.routes.params import HorizonParam, Id, horizon_or_pooled
from service.http.schemas.results import (
    EvidenceItem,
    EvidencePage,
    EvidenceRow,
    FoldPage,
    FoldRow,
    RunRankPage,
    RunRankRow,
    ScorePage,
    ScoreRow,
    columns,
)
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
from service.usecases import results

router = APIRouter(prefix="/v1/runs/{run_id}", tags=["results"])
Reader = Annotated[Caller, Depends(require("read"))]
ERRORS = (401, 403, 404, 406, 422, 500, 503)
if TYPE_CHECKING:  # the checker cannot read a Literal made from a runtime tuple
    ScoreMetricFilter = str | None
else:  # from a runtime tuple: values and docs never drift
    ScoreMetricFilter = Annotated[
        Literal[POINT_METRICS + DISTRIBUTION_METRICS + LEVEL_METRICS] | None,
        Query(description="one score's name")]
SeriesKeyFilter = Annotated[str | None, Query(max_length=200, description="one series")]
CandidateFilter = Annotated[str | None, Query(max_length=17, description="one candidate id")]
DIAGNOSTIC_SECTIONS = ("diagnostics", "stability")
EVIDENCE_SECTIONS = ("calibration", "comparison", "ranking_tests", "confidence_set",
                     "unavailable")


def _responses(row: type[BaseModel],
               csv_columns: tuple[str, ...] | None = None) -> dict[int | str, dict[str, Any]]:
    return {**csv_openapi(csv_columns or columns(row)), **problem_responses(*ERRORS)}


@router.get("/scores", response_model=ScorePage, responses=_responses(ScoreRow))
def run_scores(run_id: Id, request: Request, response: Response, caller: Reader,
               sessions: Sessions, output: FormatParam = None,
               series_key: SeriesKeyFilter = None, candidate_id: CandidateFilter = None,
               metric: ScoreMetricFilter = None,
               horizon: HorizonParam = None, limit: Limit = 1000,
               offset: Offset = 0) -> Any:
    """Every score of every candidate on every series (filter by series, candidate, metric,
    horizon)."""
    chosen = chosen_format(request, output)
    horizons = "all" if horizon is None else horizon_or_pooled(horizon)
    rows = results.score_rows(sessions, run_id, series_key=series_key,
                              candidate_id=candidate_id, metric=metric, horizon=horizons,
                              limit=limit + 1, offset=offset)
    return _answer(request, response, chosen, run_id, rows, limit, offset, ScoreRow,
                   ScorePage)


@router.get("/folds", response_model=FoldPage,
            responses=_responses(FoldRow, (*columns(FoldRow)[:-2], "level", "lower",
                                           "upper")))
def run_folds(run_id: Id, request: Request, response: Response, caller: Reader,
              sessions: Sessions, output: FormatParam = None,
              series_key: SeriesKeyFilter = None, candidate_id: CandidateFilter = None,
              limit: Limit = 1000, offset: Offset = 0) -> Any:
    """One row per fold and horizon, in series, candidate and origin order; paged. As CSV,
    one row per fold, horizon and interval level (``level``, ``lower``, ``upper``)."""
    chosen = chosen_format(request, output)
    levels, rows = results.fold_rows(sessions, run_id, series_key=series_key,
                                     candidate_id=candidate_id, limit=limit + 1, offset=offset)
    link = next_link(request, offset, limit, len(rows) > limit)
    rows = [{"run_id": run_id, **row} for row in rows[:limit]]
    if chosen == "csv":
        long = ({**row, "level": level, "lower": row[f"lower_{level}"],
                 "upper": row[f"upper_{level}"]} for row in rows for level in levels)
        return csv_response(long, (*columns(FoldRow)[:-2], "level", "lower", "upper"), link)
    link_headers(response, link)
    return FoldPage(items=[FoldRow(**_with_bounds(row, levels)) for row in rows], next=link)


@router.get("/ranking", response_model=RunRankPage, responses=_responses(RunRankRow))
def run_ranking(run_id: Id, request: Request, response: Response, caller: Reader,
                sessions: Sessions, output: FormatParam = None,
                series_key: SeriesKeyFilter = None, limit: Limit = 1000,
                offset: Offset = 0) -> Any:
    """Each series' candidates as the run ranked them by its plan's score and horizon."""
    chosen = chosen_format(request, output)
    rows = results.rank_rows(sessions, run_id, series_key=series_key, limit=limit + 1,
                             offset=offset)
    return _answer(request, response, chosen, run_id, rows, limit, offset, RunRankRow,
                   RunRankPage)


@router.get("/diagnostics", response_model=EvidencePage, responses=_responses(EvidenceRow))
def run_diagnostics(run_id: Id, request: Request, response: Response, caller: Reader,
                    sessions: Sessions, output: FormatParam = None,
                    series_key: SeriesKeyFilter = None, limit: Limit = 100,
                    offset: Offset = 0) -> Any:
    """Per series and candidate: the full-series fit report (coefficients, residual tests)
    and the stability of the estimates across re-estimating folds."""
    return _sections(run_id, request, response, sessions, output, series_key, limit, offset,
                     DIAGNOSTIC_SECTIONS)


@router.get("/evidence", response_model=EvidencePage, responses=_responses(EvidenceRow))
def run_evidence(run_id: Id, request: Request, response: Response, caller: Reader,
                 sessions: Sessions, output: FormatParam = None,
                 series_key: SeriesKeyFilter = None, limit: Limit = 100,
                 offset: Offset = 0) -> Any:
    """Per series: interval calibration, forecast comparisons, the ranking's tests and the
    model confidence set."""
    return _sections(run_id, request, response, sessions, output, series_key, limit, offset,
                     EVIDENCE_SECTIONS)


def _sections(run_id: int, request: Request, response: Response, sessions: Sessions,
              requested: FormatParam, series_key: str | None, limit: int, offset: int,
              sections: tuple[str, ...]) -> Any:
    chosen = chosen_format(request, requested)
    rows = results.evidence_rows(sessions, run_id, series_key=series_key, limit=limit + 1,
                                 offset=offset)
    link = next_link(request, offset, limit, len(rows) > limit)
    items = [EvidenceItem(series_key=row["series_key"], series_version=row["series_version"],
                          sections={name: row["evidence"].get(name) for name in sections})
             for row in rows[:limit]]
    if chosen == "csv":
        flat = [{"run_id": run_id, "series_key": item.series_key,
                 "series_version": item.series_version, "section": name, "item": path,
                 "value": value}
                for item in items for name, document in item.sections.items()
                for path, value in flatten(document)]
        return csv_response(flat, columns(EvidenceRow), link)
    link_headers(response, link)
    return EvidencePage(run_id=run_id, items=items, next=link)


def _answer(request: Request, response: Response, chosen: str, run_id: int,
            rows: list[dict[str, Any]], limit: int, offset: int, row_model: type[BaseModel],
            page_model: Callable[..., BaseModel]) -> Any:
    link = next_link(request, offset, limit, len(rows) > limit)
    rows = [{"run_id": run_id, **row} for row in rows[:limit]]
    if chosen == "csv":
        return csv_response(rows, columns(row_model), link)
    link_headers(response, link)
    return page_model(items=[row_model(**row) for row in rows], next=link)


def _with_bounds(row: dict[str, Any], levels: list[int]) -> dict[str, Any]:
    """A fold row with its ``lower_<level>``/``upper_<level>`` values as two objects."""
    bound_columns = {f"{side}_{level}" for level in levels for side in ("lower", "upper")}
    fields = {name: value for name, value in row.items() if name not in bound_columns}
    fields["lower"] = {str(level): row[f"lower_{level}"] for level in levels}
    fields["upper"] = {str(level): row[f"upper_{level}"] for level in levels}
    return fields
