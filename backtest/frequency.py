"""Observation frequencies as ISO 8601 durations, and the regular grid of periods they define.

A frequency is a whole number of days (``P1D``, ``P1W``, ``P7D``) or of months (``P1M``,
``P3M``, ``P1Y``). Every period label maps to an integer position on that grid, so
duplicates, gaps, unsorted and off-grid periods are detected by integer arithmetic.

Accepted period labels
----------------------
- day-based: ``YYYY-MM-DD``; ``P1W`` also takes ISO weeks ``YYYY-Www`` (the Monday);
- month-based: ``YYYY-MM`` or ``YYYY-MM-01``; ``P3M`` also takes ``YYYY-Qn``; ``P1Y``
  also takes ``YYYY``.

Labels are written back in the notation of the series' first period (:func:`notation_of`),
so ``2020-Q1``, ``2020-W07``, ``2020-03`` and ``2020-03-01`` come back as they were written:
``quarter`` (``YYYY-Qn``), ``week`` (``YYYY-Www``), ``year`` (``YYYY``), ``month``
(``YYYY-MM``) and ``day`` (``YYYY-MM-DD``; ``YYYY-MM-01`` for a month-based frequency). A period the
notation cannot write (a February in quarter notation, a Tuesday in week notation) falls
back to the canonical label: ``YYYY-MM-DD`` (day-based), ``YYYY-MM`` (month-based other
than yearly) and ``YYYY`` (yearly). Without a notation the canonical labels are written,
as they were before notations were kept (so stored fingerprints do not change).
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass, replace

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
    notation: str = ""  # "" (canonical) or one of NOTATIONS

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
        """Return the label of a grid position in the frequency's notation."""
        if self.unit == "day":
            day = _EPOCH + dt.timedelta(days=position)
            if self.notation == "week" and day.weekday() == 0:
                year, week, _ = day.isocalendar()
                return f"{year:04d}-W{week:02d}"
            return day.isoformat()
        year, month0 = divmod(position, 12)
        if self.notation == "quarter" and month0 % 3 == 0:
            return f"{year:04d}-Q{month0 // 3 + 1}"
        if self.notation == "month":
            return f"{year:04d}-{month0 + 1:02d}"
        if self.notation == "day":
            return f"{year:04d}-{month0 + 1:02d}-01"
        if month0 == 0 and (self.notation == "year" or self.step == 12 and not self.notation):
            return f"{year:04d}"
        return f"{year:04d}-{month0 + 1:02d}"

    def written_as(self, label: str) -> Frequency:
        """This frequency writing labels the way ``label`` is written."""
        return replace(self, notation=notation_of(label))


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


NOTATIONS = ("quarter", "week", "year", "month", "day")


def notation_of(label: str) -> str:
    """The notation a period label is written in (see the module's docstring)."""
    text = str(label).strip()
    for notation, pattern in (("quarter", _QUARTER), ("week", _ISO_WEEK), ("year", _YEAR),
                              ("month", _MONTH_ONLY)):
        if pattern.match(text):
            return notation
    return "day"


_MONTH_ONLY = re.compile(r"^\d{4}-\d{2}$")
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
