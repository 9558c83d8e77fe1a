"""Series: post one as JSON or many as tidy CSV, append actuals, list, read with versions."""

from __future__ import annotations

from typing import Annotated, Any, Literal, cast
from urllib.parse import quote

from fastapi import APIRouter, Depends, Query, Request, Response
from starlette.concurrency import run_in_threadpool

from service.errors import UnsupportedMediaTypeError
from service.http.access import Caller, require
from service.http.app_state import AppSettings, Sessions
from service.http.flat_rows import flat_columns, flat_rows
from service.http.problems import problem_responses
from service.http.routes.params import Id, TagFilter
from service.http.schemas.series import (
    AppendIn,
    ObservationOut,
    SeriesDetailOut,
    SeriesIn,
    SeriesOut,
    SeriesPage,
    SeriesWriteOut,
    UploadOut,
    VersionChange,
    VersionDataOut,
    VersionOut,
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
from service.limits import MAX_SEASON_LENGTH, MAX_UNIT_LENGTH
from service.usecases import series as stored_series
from service.usecases.ownership import check_writes
from service.usecases.series_input import series_from_csv, series_from_json, with_appended

router = APIRouter(prefix="/v1", tags=["series"])
Writer = Annotated[Caller, Depends(require("write"))]
Reader = Annotated[Caller, Depends(require("read"))]
ERRORS = (401, 403, 422, 500, 503)
CSV_EXAMPLE = "series_key,period,value,frequency\nsales/north,2024-01,112.5,P1M\n"


def series_url(key: str) -> str:
    """The URL of a series."""
    return f"/v1/series/{quote(key, safe='/')}"


@router.post("/series", status_code=201, response_model=SeriesWriteOut,
             responses=problem_responses(*ERRORS, 409, 413))
def post_series(body: SeriesIn, response: Response, caller: Writer, sessions: Sessions,
                settings: AppSettings) -> SeriesWriteOut:
    """Create a series, or store a new version of it (201); identical data answers 200."""
    series = series_from_json(body, settings)
    check_writes(caller, [series.key])

    return _written(stored_series.save_one(sessions, series, actor=caller.name, unit=body.unit,
                                           tags=body.tags), response)


@router.post("/series/upload", status_code=201, response_model=UploadOut,
             responses=problem_responses(*ERRORS, 409, 413, 415),
             openapi_extra={"requestBody": {"required": True, "content": {"text/csv": {
                 "schema": {"type": "string"}, "example": CSV_EXAMPLE}}}})
async def upload_series(request: Request, response: Response, caller: Writer, sessions: Sessions,
                        settings: AppSettings, tag: TagFilter,
                        frequency: Annotated[str | None, Query(
                            description="for series without a frequency column")] = None,
                        season_length: Annotated[int | None, Query(
                            ge=1, le=MAX_SEASON_LENGTH)] = None,
                        unit: Annotated[str | None, Query(
                            min_length=1, max_length=MAX_UNIT_LENGTH,
                            description="for series without a unit column, e.g. EUR")] = None,
                        fill: Literal["reject", "linear"] = "reject") -> UploadOut:
    """Post several series as one tidy CSV (``series_key, period, value [, frequency,
    season_length, unit]``); all are stored, or none. Rows may come in any order; periods
    are kept as written (``2020-Q1``, ``2020-W07``). ``tag`` (``name:value``) applies to
    each. 201 if any new version was stored, else 200."""
    if request.headers.get("content-type", "").split(";")[0].strip().lower() != "text/csv":
        raise UnsupportedMediaTypeError("send the CSV with Content-Type: text/csv")
    data = await request.body()
    outcome = await run_in_threadpool(_store_upload, data, caller, sessions, settings, tag,
                                      frequency, season_length, unit, fill)
    response.status_code = 201 if outcome.versions_created else 200
    return outcome


@router.get("/series", response_model=SeriesPage,
            responses={**csv_openapi(flat_columns(SeriesOut)),
                       **problem_responses(*ERRORS, 406)})
def list_series(request: Request, response: Response, caller: Reader, sessions: Sessions,
                tag: TagFilter, output: FormatParam = None,
                prefix: Annotated[str | None, Query(max_length=200)] = None,
                limit: Limit = 100, offset: Offset = 0) -> Any:
    """Series whose key starts with ``prefix`` and that carry every ``tag``, by key."""
    chosen = chosen_format(request, output)
    found = stored_series.find(sessions, prefix=prefix, tags=tag, limit=limit + 1,
                               offset=offset)
    link = next_link(request, offset, limit, len(found) > limit)
    items = [_series_out(s) for s in found[:limit]]
    if chosen == "csv":
        return csv_response(flat_rows(items), flat_columns(SeriesOut), link)
    link_headers(response, link)
    return SeriesPage(items=items, next=link)


@router.get("/series/{key:path}/versions/{number}", response_model=VersionDataOut,
            responses=problem_responses(*ERRORS, 404))
def read_version(key: str, number: Id, caller: Reader, sessions: Sessions) -> VersionDataOut:
    """One version of a series with its observations."""
    version, series = stored_series.version_with_data(sessions, key, number)
    filled = set(series.filled)
    observations = [ObservationOut(period=label, value=float(value), filled=label in filled)
                    for label, value in zip(series.labels(), series.values)]
    return VersionDataOut(**_version_out(version).model_dump(), series_key=key,
                          observations=observations)


@router.post("/series/{key:path}/observations", status_code=201, response_model=SeriesWriteOut,
             responses=problem_responses(*ERRORS, 404, 409, 413))
def append_observations(key: str, body: AppendIn, response: Response, caller: Writer,
                        sessions: Sessions, settings: AppSettings) -> SeriesWriteOut:
    """Append new actuals as a new version (201); nothing new answers 200."""
    check_writes(caller, [key])

    return _written(stored_series.append(
        sessions, key, lambda stored: with_appended(stored, body.observations, settings),
        actor=caller.name), response)


@router.get("/series/{key:path}", response_model=SeriesDetailOut,
            responses=problem_responses(*ERRORS, 404))
def read_series(key: str, caller: Reader, sessions: Sessions) -> SeriesDetailOut:
    """A series with all its versions, oldest first."""
    info, versions = stored_series.series_with_versions(sessions, key)
    return SeriesDetailOut(**_series_out(info).model_dump(),
                           versions=[_version_out(v) for v in versions])


def _store_upload(data: bytes, caller: Caller, sessions: Sessions, settings: AppSettings,
                  tags: dict[str, str], frequency: str | None, season_length: int | None,
                  unit: str | None, fill: Literal["reject", "linear"]) -> UploadOut:
    parsed = series_from_csv(data, settings, frequency=frequency,
                             season_length=season_length, unit=unit, fill=fill)
    check_writes(caller, (one.series.key for one in parsed))
    outcomes = stored_series.save_file(sessions, parsed, actor=caller.name, tags=tags or None)
    written = [_write_out(o) for o in outcomes]
    return UploadOut(versions_created=sum(o.created for o in outcomes), series=written)


def _written(outcome: stored_series.SaveOutcome, response: Response) -> SeriesWriteOut:
    response.status_code = 201 if outcome.created else 200
    response.headers["Location"] = series_url(outcome.version.series_key)
    return _write_out(outcome)


def _write_out(outcome: stored_series.SaveOutcome) -> SeriesWriteOut:
    key = outcome.version.series_key
    return SeriesWriteOut(series_key=key, url=series_url(key), created=outcome.created,
                          version=_version_out(outcome.version))


def _series_out(info: stored_series.SeriesInfo) -> SeriesOut:
    return SeriesOut(key=info.key, url=series_url(info.key), frequency=info.frequency,
                     season_length=info.season_length, unit=info.unit, tags=info.tags,
                     created_at=info.created_at, created_by=info.created_by,
                     latest_version=_version_out(info.latest))


def _version_out(version: stored_series.VersionInfo) -> VersionOut:
    return VersionOut(number=version.number, fingerprint=version.fingerprint,
                      change=cast(VersionChange, version.change),  # as stored; validated
                      n_obs=version.n_obs,
                      first_period=version.first_period, last_period=version.last_period,
                      created_at=version.created_at, created_by=version.created_by)
