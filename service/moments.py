"""Dates and times given in requests and on the command line: one parser for all.

ISO 8601 as Python reads it (``datetime.fromisoformat``): a date (``2026-12-03``,
``20261203``, ``2026-W49-4``) means its midnight, and a date and time without a zone
(``2026-12-03T09:30``) is read as UTC; with a zone (``Z``, ``+01:00``) it is converted to
UTC. Anything else is an error naming what was given.
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Annotated

from pydantic import BeforeValidator

MOMENT_HELP = ("ISO 8601 date or date and time, e.g. 2026-12-03 or 2026-12-03T09:30:00Z; "
               "a date is its midnight, a time without a zone is UTC")


def parse_moment(text: str) -> datetime:
    """The UTC time ``text`` names; :class:`ValueError` with a plain message otherwise."""
    try:
        moment = datetime.fromisoformat(text.strip())
    except ValueError:
        raise ValueError(f"{text!r} is not an ISO 8601 date or time (e.g. 2026-12-03 or "
                         "2026-12-03T09:30:00Z)") from None
    if moment.tzinfo is None:
        return moment.replace(tzinfo=UTC)
    try:
        return moment.astimezone(UTC)
    except OverflowError:
        raise ValueError(f"{text!r} is outside the years 1 to 9999 in UTC") from None


def _validated(value: object) -> object:
    return parse_moment(value) if isinstance(value, str) else value


Moment = Annotated[datetime, BeforeValidator(_validated)]
"""A request field or query parameter read by :func:`parse_moment`."""
