"""Tables answered as JSON or CSV, chosen by ``?format=`` or else the ``Accept`` header, and paged.

CSV is UTF-8 with a header row, the documented column names, empty fields for nulls,
``True``/``False`` for booleans (as the ``foldline backtest`` files) and ISO 8601 times,
written by :func:`backtest.tidy.write_csv` (text that would start a spreadsheet formula
gets a leading ``'``).
A page that has a successor names it in the JSON ``next`` member and in a
``Link: <...>; rel="next"`` header.
"""

from __future__ import annotations

import io
from collections.abc import Iterable, Mapping, Sequence
from typing import Annotated, Any, Literal

from fastapi import Query, Request
from fastapi.responses import Response

from backtest.tidy import write_csv
from service.errors import NotAcceptableError
from service.limits import MAX_ID, MAX_PAGE

Format = Literal["json", "csv"]
FORMATS: dict[Format, str] = {"json": "application/json", "csv": "text/csv"}

FormatParam = Annotated[Format | None, Query(
    alias="format", description="json or csv; overrides the Accept header")]
Limit = Annotated[int, Query(ge=1, le=MAX_PAGE, description="rows per page")]
Offset = Annotated[int, Query(ge=0, le=MAX_ID, description="rows to skip")]


def csv_openapi(columns: Sequence[str]) -> dict[int | str, dict[str, Any]]:
    """The OpenAPI entry of a 200 answer that may also be CSV with these columns."""
    return {200: {"content": {"text/csv": {"schema": {"type": "string"}}},
                  "description": "JSON, or CSV (Accept: text/csv or ?format=csv) with columns "
                                 + ", ".join(columns)}}


def chosen_format(request: Request, requested: Format | None) -> Format:
    """``requested`` if given, else the best of JSON and CSV by the ``Accept`` header."""
    if requested is not None:
        return requested
    accept = request.headers.get("accept", "")
    if not accept.strip():
        return "json"
    weights = {name: _weight(accept, media) for name, media in FORMATS.items()}
    best = max(weights, key=lambda name: weights[name])
    if weights[best] <= 0:
        raise NotAcceptableError(f"this resource is available as {' or '.join(FORMATS.values())};"
                                 f" the request accepts only {accept}")
    return best


def next_link(request: Request, offset: int, limit: int, has_more: bool) -> str | None:
    """The relative URL of the next page, if there is one."""
    if not has_more:
        return None
    query = request.url.include_query_params(offset=offset + limit, limit=limit).query
    return f"{request.url.path}?{query}"


def csv_response(rows: Iterable[Mapping[str, Any]], columns: Sequence[str],
                 link: str | None) -> Response:
    """A CSV answer with exactly ``columns``, in order; ``link`` is the next page."""
    out = io.StringIO()
    write_csv(({name: row.get(name) for name in columns} for row in rows), columns, out)
    headers = {"Link": f'<{link}>; rel="next"'} if link else {}
    return Response(out.getvalue(), media_type="text/csv; charset=utf-8", headers=headers)


def link_headers(response: Response, link: str | None) -> None:
    """Add the next page's ``Link`` header to a JSON answer."""
    if link:
        response.headers["Link"] = f'<{link}>; rel="next"'


def _weight(accept: str, media: str) -> float:
    kind = media.split("/")[0]
    best = 0.0
    for part in accept.split(","):
        name, *params = (p.strip() for p in part.split(";"))
        if name.lower() not in (media, f"{kind}/*", "*/*"):
            continue
        q = next((p[2:] for p in params if p.startswith("q=")), "1")
        try:
            best = max(best, float(q))
        except ValueError:
            continue
    return best
