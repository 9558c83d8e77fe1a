"""Points in time given by people: ISO 8601 dates and times from query parameters and
command-line options, read the same way everywhere."""

from __future__ import annotations

from datetime import UTC, date, datetime, time, timedelta

from service.errors import FieldError, InvalidInputError


def point_in_time(name: str, text: str | None, *, day_end: bool = False) -> datetime | None:
    """``text`` as an aware time. A time without an offset is read as UTC; a date alone means
    the start of that day (UTC), or its last microsecond when ``day_end`` (so that
    ``as_of=2025-03-31`` includes everything recorded on that day). Raises
    :class:`InvalidInputError` naming ``name`` for anything else."""
    if text is None:
        return None
    try:
        if "T" not in text and " " not in text:
            day = datetime.combine(date.fromisoformat(text), time(), tzinfo=UTC)
            return day + timedelta(days=1, microseconds=-1) if day_end else day
        moment = datetime.fromisoformat(text)
    except ValueError:
        raise InvalidInputError(
            f"{name} {text!r} is not an ISO 8601 date or time (e.g. 2025-03-31 or "
            "2025-03-31T17:00:00Z)", errors=[FieldError("query", f"/{name}", "not ISO 8601")]
        ) from None
    return moment if moment.tzinfo else moment.replace(tzinfo=UTC)
