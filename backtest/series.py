"""A validated, regularly spaced time series: the engine's only kind of data input."""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np

from backtest.errors import SeriesError, SeriesTooLongError
from backtest.frequency import Frequency, parse_frequency

FillPolicy = Literal["reject", "linear"]


@dataclass(frozen=True, eq=False)
class Series:
    """A series on a regular grid; ``values[i]`` belongs to grid position ``start + i * step``."""

    key: str
    frequency: Frequency
    season_length: int
    start: int
    values: np.ndarray = field(repr=False)
    filled: tuple[str, ...] = ()
    fill_policy: FillPolicy = "reject"

    def __len__(self) -> int:
        return len(self.values)

    def label(self, index: int) -> str:
        """Canonical label of the observation at ``index`` (may lie beyond the data)."""
        return self.frequency.label(self.start + index * self.frequency.step)

    def labels(self) -> list[str]:
        """Canonical labels of all observations."""
        return [self.label(i) for i in range(len(self))]

    def as_of(self, end: int) -> np.ndarray:
        """The first ``end`` values as known at an origin after ``end`` periods: a fill
        that reaches the last of them carries the last observed value forward instead of
        interpolating towards later data (gaps inside the window are the same either way).
        """
        values = np.array(self.values[:end], dtype=float)
        last = end - 1
        while last > 0 and self.is_filled(last):
            last -= 1
        values[last + 1:] = values[last]
        return values

    def is_filled(self, index: int) -> bool:
        """Whether the value at ``index`` was made by the fill policy, not observed."""
        return bool(self.filled) and self.label(index) in self.filled

    def index_of(self, label: str) -> int:
        """Observation index of a period label (may be outside the data)."""
        offset = self.frequency.position(label) - self.start
        if offset % self.frequency.step:
            raise SeriesError(f"period {label!r} is off the {self.frequency.duration} grid "
                              f"of series {self.key!r}")
        return offset // self.frequency.step

    def fingerprint(self) -> str:
        """SHA-256 of the canonical serialisation (see :func:`canonical_json`)."""
        return hashlib.sha256(canonical_json(self).encode()).hexdigest()

    def summary(self) -> dict[str, Any]:
        """JSON-ready description of the series, without its values."""
        return {
            "key": self.key,
            "frequency": self.frequency.duration,
            "season_length": self.season_length,
            "n_obs": len(self),
            "first_period": self.label(0),
            "last_period": self.label(len(self) - 1),
            "fingerprint": self.fingerprint(),
            "fill_policy": self.fill_policy,
            "filled_periods": list(self.filled),
        }


def canonical_json(series: Series) -> str:
    """Canonical text of a series: sorted keys, no spaces, shortest round-trip floats.

    The observations are ``[label, value]`` pairs with canonical labels; periods filled by
    a fill policy are listed too, so a filled series never matches one with real values.
    """
    body = {
        "key": series.key,
        "frequency": series.frequency.duration,
        "season_length": series.season_length,
        "observations": [[lab, float(v)] for lab, v in zip(series.labels(), series.values)],
        "filled": list(series.filled),
    }
    return json.dumps(body, sort_keys=True, separators=(",", ":"), allow_nan=False)


def make_series(
    key: str,
    frequency: str,
    observations: Iterable[tuple[str, float]],
    *,
    season_length: int | None = None,
    fill: FillPolicy = "reject",
    max_length: int | None = None,
    places: Sequence[str] | None = None,
) -> Series:
    """Validate observations and build a :class:`Series`.

    Observations may come in any order: they are sorted by period. Labels are kept in the
    notation of the earliest period (``2020-Q1`` stays ``2020-Q1``; see
    :mod:`backtest.frequency`). Raises :class:`SeriesError` naming the series, the period
    and where the observation came from (``places[i]``, e.g. ``"line 7"`` of a file;
    default ``"observation i"``, counting from 1) for duplicate or off-grid periods,
    non-finite values and, unless ``fill`` is ``"linear"``, missing periods. With
    ``max_length``, a series spanning more periods raises :class:`SeriesTooLongError`
    before any gap is filled or listed.
    """
    key = str(key).strip()
    if not key:
        raise SeriesError("series key is empty")
    freq = parse_frequency(frequency)
    m = freq.default_season_length if season_length is None else season_length
    if not isinstance(m, int) or isinstance(m, bool) or m < 1:
        raise SeriesError(f"series {key!r}: season length must be a positive integer, got {m!r}")
    if fill not in ("reject", "linear"):
        raise SeriesError(f"series {key!r}: fill policy {fill!r} is unknown; "
                          "use 'reject' or 'linear'")
    rows = list(observations)
    if not rows:
        raise SeriesError(f"series {key!r} has no observations")
    if max_length is not None and len(rows) > max_length:
        raise SeriesTooLongError(key, len(rows), max_length)
    where = list(places) if places is not None else [f"observation {i}"
                                                     for i in range(1, len(rows) + 1)]
    order, positions = _sorted_positions(key, freq, rows, where)
    span = (positions[-1] - positions[0]) // freq.step + 1
    if max_length is not None and span > max_length:
        raise SeriesTooLongError(key, span, max_length)
    values = _values(key, [rows[i] for i in order], [where[i] for i in order])
    written = freq.written_as(rows[order[0]][0])
    return _regularise(key, written, m, positions, values, fill)


def _sorted_positions(key: str, freq: Frequency, rows: Sequence[tuple[str, float]],
                      where: Sequence[str]) -> tuple[list[int], list[int]]:
    """The rows' order by period and their sorted grid positions."""
    found: list[int] = []
    for place, (label, _) in zip(where, rows):
        try:
            found.append(freq.position(label))
        except SeriesError as exc:
            raise SeriesError(f"series {key!r}, {place}: {exc}") from None
    order = sorted(range(len(rows)), key=lambda i: (found[i], i))
    positions = [found[i] for i in order]
    for before, after in zip(order, order[1:]):
        if found[before] == found[after]:
            raise SeriesError(f"series {key!r}: period {rows[after][0]!r} appears twice "
                              f"({where[before]} and {where[after]})")
    start = positions[0]
    for i in order:
        if (found[i] - start) % freq.step:
            raise SeriesError(f"series {key!r}, {where[i]}: period {rows[i][0]!r} is off the "
                              f"{freq.duration} grid that starts at {rows[order[0]][0]!r}")
    return order, positions


def _values(key: str, rows: Sequence[tuple[str, float]], where: Sequence[str]) -> np.ndarray:
    out = np.empty(len(rows))
    for index, (place, (label, value)) in enumerate(zip(where, rows)):
        try:
            number = float(value)
        except (TypeError, ValueError):
            raise SeriesError(f"series {key!r}, {place}: value {value!r} at period {label!r} "
                              "is not a number") from None
        if not math.isfinite(number):
            raise SeriesError(f"series {key!r}, {place}: value at period {label!r} "
                              f"is not finite ({number})")
        out[index] = number
    return out


def _regularise(key: str, freq: Frequency, m: int, positions: list[int],
                values: np.ndarray, fill: FillPolicy) -> Series:
    steps = (np.asarray(positions) - positions[0]) // freq.step
    full = np.arange(steps[-1] + 1)
    missing = np.setdiff1d(full, steps)
    labels = [freq.label(positions[0] + int(i) * freq.step) for i in missing]
    if len(missing) and fill == "reject":
        shown = ", ".join(labels[:5]) + (" ..." if len(labels) > 5 else "")
        raise SeriesError(f"series {key!r}: {len(missing)} period(s) missing: {shown} "
                          "(fill them, or choose the 'linear' fill policy)")
    filled = np.interp(full, steps, values) if len(missing) else values.copy()
    filled.setflags(write=False)
    return Series(key, freq, m, positions[0], filled, tuple(labels), fill)
