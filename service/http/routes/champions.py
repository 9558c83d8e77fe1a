"""Champions: choose a series' champion, read it and its history, list every series'
champion, and read the champions a run suggests. Choices are only ever added."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Depends, Request, Response

from service.http.access import Caller, require
from service.http.app_state import Sessions
from service.http.problems import problem_responses
from service.http.routes.params import AsOfParam, Id
from service.http.routes.series import series_url
from service.http.schemas.champions import (
    ChampionHistory,
    ChampionIn,
    ChampionPage,
    ChampionRow,
    SuggestionPage,
    SuggestionRow,
)
from service.http.schemas.results import columns
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
from service.usecases import champions
from service.views.ledger_answers import champion_row
from storage.errors import NotFoundError

router = APIRouter(prefix="/v1", tags=["champions"])
Writer = Annotated[Caller, Depends(require("write"))]
Reader = Annotated[Caller, Depends(require("read"))]
ERRORS = (401, 403, 422, 500, 503)


def champion_url(key: str) -> str:
    """The URL of a series' champion."""
    return f"{series_url(key)}/champion"


@router.post("/series/{key:path}/champion", status_code=201, response_model=ChampionRow,
             responses=problem_responses(*ERRORS, 404, 409, 413))
def choose_champion(key: str, body: ChampionIn, response: Response, caller: Writer,
                    sessions: Sessions) -> ChampionRow:
    """Choose a candidate as the series' champion, naming the succeeded run that
    backtested it and why; it joins the series' champion history (201)."""
    answer = champion_row(champions.choose(sessions, series_key=key,
                                           candidate_id=body.candidate_id, run_id=body.run_id,
                                           reason=body.reason, actor=caller.name))
    response.headers["Location"] = champion_url(key)
    return answer


@router.get("/series/{key:path}/champion/history", response_model=ChampionHistory,
            responses={**csv_openapi(columns(ChampionRow)),
                       **problem_responses(*ERRORS, 404, 406)})
def read_champion_history(key: str, request: Request, caller: Reader, sessions: Sessions,
                          output: FormatParam = None, as_of: AsOfParam = None) -> Any:
    """Every champion choice of the series (made by ``as_of``), oldest first: who chose
    what, when and why."""
    chosen = chosen_format(request, output)
    moment = point_in_time("as_of", as_of, day_end=True)
    rows = [champion_row(c) for c in champions.champion_choices(sessions, key, moment)]
    if chosen == "csv":
        return csv_response((r.model_dump() for r in rows), columns(ChampionRow), None)
    return ChampionHistory(series_key=key, items=rows, next=None)


@router.get("/series/{key:path}/champion", response_model=ChampionRow,
            responses=problem_responses(*ERRORS, 404))
def read_champion(key: str, caller: Reader, sessions: Sessions,
                  as_of: AsOfParam = None) -> ChampionRow:
    """The series' current champion, or the one in force at ``as_of`` (404 if none was
    chosen by then)."""
    moment = point_in_time("as_of", as_of, day_end=True)
    choice = champions.champion_of(sessions, key, moment)
    if choice is None:
        raise NotFoundError(f"series {key!r} has no champion yet" if moment is None else
                            f"series {key!r} had no champion at {moment.isoformat()}")
    return champion_row(choice)


@router.get("/champions", response_model=ChampionPage,
            responses={**csv_openapi(columns(ChampionRow)),
                       **problem_responses(401, 403, 406, 422, 500, 503)})
def list_champions(request: Request, response: Response, caller: Reader, sessions: Sessions,
                   output: FormatParam = None, as_of: AsOfParam = None,
                   limit: Limit = 1000, offset: Offset = 0) -> Any:
    """The current champion of every series that has one (or the one in force at
    ``as_of``), by series key."""
    chosen = chosen_format(request, output)
    moment = point_in_time("as_of", as_of, day_end=True)
    found = champions.all_champions(sessions, moment)
    keys = sorted(found)[offset:offset + limit + 1]
    link = next_link(request, offset, limit, len(keys) > limit)
    rows = [champion_row(found[key]) for key in keys[:limit]]
    if chosen == "csv":
        return csv_response((r.model_dump() for r in rows), columns(ChampionRow), link)
    link_headers(response, link)
    return ChampionPage(items=rows, next=link)


@router.get("/runs/{run_id}/champion-suggestions", response_model=SuggestionPage,
            responses={**csv_openapi(columns(SuggestionRow)),
                       **problem_responses(*ERRORS, 404, 406)})
def run_champion_suggestions(run_id: Id, request: Request, caller: Reader, sessions: Sessions,
                             output: FormatParam = None) -> Any:
    """Per series of the run, the candidate it suggests as champion: the best-ranked in the
    model confidence set. Confirm one by posting it to the series' champion."""
    chosen = chosen_format(request, output)
    rows = [SuggestionRow(**vars(s)) for s in champions.suggestions(sessions, run_id)]
    if chosen == "csv":
        return csv_response((r.model_dump() for r in rows), columns(SuggestionRow), None)
    return SuggestionPage(items=rows, next=None)
