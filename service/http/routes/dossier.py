"""The series dossier: the auditor's question for one series in one request."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Depends, Query, Request

from service.http.access import Caller, require
from service.http.app_state import Sessions
from service.http.problems import problem_responses
from service.http.schemas.dossier import DossierOut, StepRow
from service.http.schemas.results import columns
from service.http.tables import FormatParam, chosen_format, csv_openapi, csv_response
from service.limits import MAX_DOSSIER_ITEMS
from service.moments import point_in_time
from service.usecases.dossier import read_dossier_of
from service.views.dossier import dossier_out, step_rows

router = APIRouter(prefix="/v1", tags=["dossier"])
Reader = Annotated[Caller, Depends(require("read"))]
ERRORS = (401, 403, 404, 406, 422, 500, 503)
PERIOD = r"^[0-9]{4}(-(Q[1-4]|W[0-9]{2}|[0-9]{2}(-[0-9]{2})?))?$"
Period = Annotated[str | None, Query(pattern=PERIOD, description="a period label, e.g. "
                                     "2025-03, 2025-Q1, 2025-W07 or 2025-03-31")]


@router.get("/series/{key:path}/dossier", response_model=DossierOut,
            responses={**csv_openapi(columns(StepRow)), **problem_responses(*ERRORS)})
def read_dossier(
        key: str, request: Request, caller: Reader, sessions: Sessions,
        output: FormatParam = None,
        as_of: Annotated[str | None, Query(description=(
            "ISO 8601 date or time; the dossier as it stood then (default: now). A date "
            "means the end of that day, a time without an offset is UTC"))] = None,
        issued_from: Annotated[str | None, Query(description="ISO 8601; issued at or after")]
        = None,
        issued_to: Annotated[str | None, Query(description="ISO 8601; issued before")] = None,
        origin_from: Period = None, origin_to: Period = None,
        target_from: Period = None, target_to: Period = None,
        limit: Annotated[int, Query(ge=1, le=MAX_DOSSIER_ITEMS, description=(
            "at most this many forecasts (the latest issued) and audit events"))] = 200) -> Any:
    """Which model was trusted for the series, why, and how the forecasts issued with it
    fared: the champion in force at ``as_of`` and every earlier choice with the run that
    justified it (rank, score, MASE by horizon), the data versions with fingerprints, the
    forecasts issued in the window with realised accuracy beside the backtest's promise,
    and the audit events that touched the series. CSV: one row per forecast step."""
    chosen = chosen_format(request, output)
    dossier = read_dossier_of(
        sessions, key, as_of=point_in_time("as_of", as_of, day_end=True), limit=limit,
        issued_from=point_in_time("issued_from", issued_from, day_end=False),
        issued_to=point_in_time("issued_to", issued_to, day_end=False),
        origin_from=origin_from, origin_to=origin_to, target_from=target_from,
        target_to=target_to)
    if chosen == "csv":
        return csv_response((row.model_dump() for row in step_rows(dossier)), columns(StepRow),
                            None)
    return dossier_out(dossier)
