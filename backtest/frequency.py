"""Observation frequencies as ISO 8601 durations, and the regular grid of periods they define.

A frequency is a whole number of days (``P1D``, ``P1W``, ``P7D``) or of months (``P1M``,
``P3M``, ``P1Y``). Every period label maps to an integer position on that grid, so
duplicates, gaps, unsorted and off-grid periods are detected by integer arithmetic.

Accepted period labels
----------------------
- day-based: ``YYYY-MM-DD``; ``P1W`` also takes ISO weeks ``YYYY-Www`` (the Monday);
- month-based: ``YYYY-MM`` or ``YYYY-MM-01``; ``P3M`` also takes ``YYYY-Qn``; ``P1Y``
  also takes ``YYYY``.

Canonical labels written back are ``YYYY-MM-DD`` (day-based), ``YYYY-MM`` (month-based
other than yearly) and ``YYYY`` (yearly).
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass

from backtest.errors import SeriesError

_DURATION = re.compile(r"^P(\d{1,4})([DWMY])$")
_DEFAULT_SEASON = {"P1D": 7, "P1W": 52, "P1M": 12, "P3M": 4, "P1Y": 1}
_EPOCH = dt.date(1970, 1, 5)  # a Monday, so weekly positions count ISO weeks


@dataclass(frozen=True)
class Frequency:
    """A regular sampling interval: ``step`` units of days or months."""

    duration: str
    unit: str  # "day" or "month"
    step: int

    @property
    def default_season_length(self) -> int:
        """Season length used when the caller gives none (1 for unusual durations)."""
        return _DEFAULT_SEASON.get(self.duration, 1)

    def position(self, label: str) -> int:
        """Return the grid position of ``label`` in units; raise if it cannot be read."""
        if self.unit == "day":
            return (_parse_day(label) - _EPOCH).days
        return _parse_month(label)

    def label(self, position: int) -> str:
        """Return the canonical label of a grid position."""
        if self.unit == "day":
            return (_EPOCH + dt.timedelta(days=position)).isoformat()
        year, month0 = divmod(position, 12)
        if self.step == 12 and month0 == 0:
            return f"{year:04d}"
        return f"{year:04d}-{month0 + 1:02d}"


def parse_frequency(duration: str) -> Frequency:
    """Parse an ISO 8601 duration such as ``P1M`` into a :class:`Frequency`."""
    match = _DURATION.match(str(duration).strip().upper())
    if not match or int(match.group(1)) < 1:
        raise SeriesError(
            f"frequency {duration!r} is not a supported ISO 8601 duration; "
            "use one of P1D, P1W, P1M, P3M, P1Y (or PnD, PnW, PnM, PnY)"
        )
    n, unit = int(match.group(1)), match.group(2)
    canonical = f"P{n}{unit}"
    if unit == "D":
        return Frequency(canonical, "day", n)
    if unit == "W":
        return Frequency(canonical, "day", 7 * n)
    if unit == "M":
        return Frequency(canonical, "month", n)
    return Frequency(canonical, "month", 12 * n)


_ISO_WEEK = re.compile(r"^(\d{4})-W(\d{2})$")
_QUARTER = re.compile(r"^(\d{4})-Q([1-4])$")
_MONTH = re.compile(r"^(\d{4})-(\d{2})(?:-(\d{2}))?$")
_YEAR = re.compile(r"^(\d{4})$")


def _parse_day(label: str) -> dt.date:
    text = str(label).strip()
    week = _ISO_WEEK.match(text)
    try:
        if week:
            return dt.date.fromisocalendar(int(week.group(1)), int(week.group(2)), 1)
        return dt.date.fromisoformat(text)
    except ValueError as exc:
        raise SeriesError(f"period {label!r} is not a date (YYYY-MM-DD or YYYY-Www)") from exc


def _parse_month(label: str) -> int:
    text = str(label).strip()
    if quarter := _QUARTER.match(text):
        return int(quarter.group(1)) * 12 + 3 * (int(quarter.group(2)) - 1)
    if year := _YEAR.match(text):
        return int(year.group(1)) * 12
    month = _MONTH.match(text)
    if not month or not 1 <= int(month.group(2)) <= 12:
        raise SeriesError(f"period {label!r} is not a month (YYYY-MM, YYYY-MM-01, YYYY-Qn or YYYY)")
    if month.group(3) is not None and month.group(3) != "01":
        raise SeriesError(
            f"period {label!r} is off the monthly grid: a month-based period starts on day 01"
        )
    return int(month.group(1)) * 12 + int(month.group(2)) - 1
