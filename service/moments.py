"""Points in time given by people: ISO 8601 dates and times from query parameters and
command-line options, read the same way everywhere (one parser, :func:`point_in_time`).

A date (``2026-12-03``, ``20261203``, ``2026-W49-4``) means the start of that day in UTC
(or its end, for ``as_of``); a date and time without an offset (``2026-12-03T09:30``) is
read as UTC; one with an offset (``Z``, ``+01:00``) is converted to UTC. Anything else is
a 422 problem, or one line on the command line, naming the parameter.
"""

from __future__ import annotations

from datetime import UTC, date, datetime, time, timedelta

from service.errors import FieldError, InvalidInputError

MOMENT_HELP = ("ISO 8601 date or date and time, e.g. 2026-12-03 or 2026-12-03T09:30:00Z; "
               "a date is the start of that day and a time without an offset is UTC")


def point_in_time(name: str, text: str | None, *, day_end: bool = False) -> datetime | None:
    """``text`` as an aware UTC time. A time without an offset is read as UTC; a date alone
    means the start of that day (UTC), or its last microsecond when ``day_end`` (so that
    ``as_of=2025-03-31`` includes everything recorded on that day). Raises
    :class:`InvalidInputError` naming ``name`` for anything else."""
    if text is None:
        return None
    text = text.strip()
    try:
        if "T" not in text and " " not in text:
            day = datetime.combine(date.fromisoformat(text), time(), tzinfo=UTC)
            return day + timedelta(days=1, microseconds=-1) if day_end else day
        moment = datetime.fromisoformat(text)
        return moment.replace(tzinfo=UTC) if moment.tzinfo is None else moment.astimezone(UTC)
    except (ValueError, OverflowError):
        raise InvalidInputError(
            f"{name} {text!r} is not an ISO 8601 date or time in the years 1 to 9999 (e.g. "
            "2025-03-31 or 2025-03-31T17:00:00Z)",
            errors=[FieldError("query", f"/{name}", "not ISO 8601")]) from None
