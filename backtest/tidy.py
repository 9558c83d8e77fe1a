"""Tidy CSV in and out: series files in, fold and score tables out.

Series CSV: a header row, then one row per observation. Required columns ``series_key``,
``period``, ``value``; optional ``frequency`` (ISO 8601 duration), ``season_length`` and
``unit``, constant within a series. Several series may share a file: rows are grouped by
key in order of first appearance, and each series' rows are sorted by period. Periods keep
the notation they are written in (``2020-Q1``, ``2020-W07``, ``2020-03``). Every error
names the file line (the header is line 1) and the series key.

Output columns are listed in :data:`FOLD_COLUMNS` and :data:`SCORE_COLUMNS`; they are a
stable, documented interface (DEVELOPERS.md, "Output tables").

:func:`write_csv` is the one CSV writer of the service and the command line. A text cell
that a spreadsheet would run as a formula (it starts with ``=``, ``+``, ``-``, ``@``, a tab
or a carriage return: the OWASP "CSV Injection" rule) is written with a leading ``'``;
numbers, and text that is a plain decimal number such as ``-1.5``, are written as they are.
"""

from __future__ import annotations

import csv
import io
import re
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from backtest.errors import SeriesError, TooManySeriesError
from backtest.results import BacktestResult
from backtest.series import FillPolicy, Series, make_series

PLAIN_DECIMAL = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
REQUIRED = ("series_key", "period", "value")
OPTIONAL = ("frequency", "season_length", "unit")
FOLD_COLUMNS = ("series_key", "candidate_id", "candidate", "fold", "origin", "train_start",
                "train_size", "reestimated", "status", "horizon", "period", "actual", "point",
                "level", "lower", "upper")
SCORE_COLUMNS = ("series_key", "candidate_id", "candidate", "horizon", "metric", "level",
                 "value", "count", "note")
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NUMBER = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
RANKING_COLUMNS = ("series_key", "rank", "candidate_id", "candidate", "score", "ratio_to_benchmark",
                   "is_benchmark", "folds_ok", "folds_failed", "folds_not_converged",
                   "in_confidence_set", "beats_benchmark", "calibration_zone", "score_own_folds",
                   "common_folds", "score_count", "score_possible")


@dataclass(frozen=True)
class FileSeries:
    """A series read from a file, with the unit the file gives it (if any)."""

    series: Series
    unit: str | None


def read_series_csv(text: str, *, frequency: str | None = None,
                    season_length: int | None = None, unit: str | None = None,
                    fill: FillPolicy = "reject", max_length: int | None = None,
                    max_series: int | None = None,
                    frequency_option: str = "give one for the whole file") -> list[FileSeries]:
    """Parse a tidy series CSV; errors name the file line (header = line 1) and the key.

    ``frequency``, ``season_length`` and ``unit`` apply to series without the column;
    ``frequency_option`` says how the caller takes the whole file's frequency (the error
    for a series without one shows it). ``max_series`` and ``max_length`` (see
    :func:`make_series`) are checked on the rows as read, before any series is built or
    any gap filled.
    """
    reader = csv.DictReader(io.StringIO(text))
    header = reader.fieldnames or []
    missing = [c for c in REQUIRED if c not in header]
    if missing:
        raise SeriesError(f"line 1: missing column(s) {', '.join(missing)}; "
                          f"the header must include {', '.join(REQUIRED)}")
    unknown = [c for c in header if c not in REQUIRED + OPTIONAL]
    if unknown:
        raise SeriesError(f"line 1: unknown column(s) {', '.join(unknown)}; the columns are "
                          f"{', '.join(REQUIRED + OPTIONAL)}")
    groups: dict[str, dict[str, Any]] = {}
    for line, row in enumerate(reader, start=2):
        if None in row or any(row.get(c) is None for c in REQUIRED):
            raise SeriesError(f"line {line}: expected {len(header)} fields")
        key = row["series_key"].strip()
        if not key:
            raise SeriesError(f"line {line}: series_key is empty")
        if max_series is not None and key not in groups and len(groups) == max_series:
            raise TooManySeriesError(len(groups) + 1, max_series)
        group = groups.setdefault(key, {"rows": [], "lines": [], "line": line,
                                        **{c: row.get(c) or None for c in OPTIONAL}})
        _check_constant(group, row, line, key)
        group["rows"].append((row["period"], _number(row["value"], line, key)))
        group["lines"].append(f"line {line}")
    if not groups:
        raise SeriesError("the file has no observations")
    return [FileSeries(_build(key, g, frequency, season_length, fill, max_length,
                              frequency_option), g["unit"] or unit)
            for key, g in groups.items()]


def _check_constant(group: dict[str, Any], row: dict[str, Any], line: int, key: str) -> None:
    for column in OPTIONAL:
        value, first = row.get(column) or None, group[column]
        if value is not None and first is not None and str(value) != str(first):
            raise SeriesError(f"series {key!r}, line {line}: {column} {value!r} differs from "
                              f"{first!r} given earlier (line {group['line']})")


def _number(text: str, line: int, key: str) -> float:
    """A value written as a plain decimal number (``-12``, ``3.5``, ``1e6``): not the other
    spellings Python's ``float`` takes (``1_000``, non-ASCII digits, ``inf``, ``nan``)."""
    if not PLAIN_DECIMAL.fullmatch(text.strip()):
        raise SeriesError(f"series {key!r}, line {line}: value {text[:40]!r} is not a number "
                          "(write plain decimals: digits 0-9, an optional sign, point and "
                          "exponent)")
    return float(text)


def _build(key: str, group: dict[str, Any], frequency: str | None, season_length: int | None,
           fill: FillPolicy, max_length: int | None, frequency_option: str) -> Series:
    frequency = group["frequency"] or frequency
    if not frequency:
        raise SeriesError(f"series {key!r}, line {group['line']}: no frequency; add a "
                          "frequency column (an ISO 8601 duration such as P1M, P3M, P1W) "
                          f"or {frequency_option}")
    m = season_length
    if group["season_length"] is not None:
        try:
            m = int(group["season_length"])
        except ValueError:
            raise SeriesError(f"series {key!r}, line {group['line']}: season_length "
                              f"{group['season_length']!r} is not an integer") from None
    return make_series(key, frequency, group["rows"], season_length=m, fill=fill,
                       max_length=max_length, places=group["lines"])


def fold_rows(result: BacktestResult) -> Iterator[dict[str, Any]]:
    """Long form: one row per fold x horizon x interval level (``level``, ``lower``,
    ``upper``), the point forecast and actual repeated on each level's row."""
    levels = result.plan["levels"]
    for sr in result.series:
        labels = {c.candidate_id: c.label for c in sr.candidates}
        for f in sr.folds:
            for h, period in enumerate(f.periods, start=1):
                row = {"series_key": f.series_key, "candidate_id": f.candidate_id,
                       "candidate": labels[f.candidate_id], "fold": f.fold, "origin": f.origin,
                       "train_start": f.train_start, "train_size": f.train_size,
                       "reestimated": f.reestimated, "status": f.status, "horizon": h,
                       "period": period, "actual": f.actuals[h - 1],
                       "point": f.point[h - 1] if f.point else None}
                for level in levels or [None]:  # a plan without levels: one row, no bounds
                    known = level is not None and f.lower
                    yield {**row, "level": level,
                           "lower": f.lower[level][h - 1] if known else None,
                           "upper": f.upper[level][h - 1] if known else None}


def score_rows(result: BacktestResult) -> Iterator[dict[str, Any]]:
    """One row per candidate x horizon x metric (x level); ``horizon`` is empty when pooled."""
    for sr in result.series:
        labels = {c.candidate_id: c.label for c in sr.candidates}
        for s in sr.scores:
            yield {"series_key": sr.series["key"], "candidate_id": s.candidate_id,
                   "candidate": labels[s.candidate_id], "horizon": s.horizon,
                   "metric": s.metric, "level": s.level, "value": s.value, "count": s.count,
                   "note": s.note}


def ranking_rows(result: BacktestResult) -> Iterator[dict[str, Any]]:
    """One row per series x candidate, in rank order."""
    for sr in result.series:
        for r in sr.ranking:
            yield {"series_key": sr.series["key"], "rank": r.rank,
                   "candidate_id": r.candidate_id, "candidate": r.label, "score": r.score,
                   "ratio_to_benchmark": r.ratio_to_benchmark, "is_benchmark": r.is_benchmark,
                   "folds_ok": r.folds_ok,
                   "folds_failed": r.folds_failed, "folds_not_converged": r.folds_not_converged,
                   "in_confidence_set": r.in_confidence_set,
                   "beats_benchmark": r.beats_benchmark, "calibration_zone": r.calibration_zone,
                   "score_own_folds": r.score_own_folds, "common_folds": r.common_folds,
                   "score_count": r.score_count, "score_possible": r.score_possible}


def write_csv(rows: Iterable[dict[str, Any]], columns: Iterable[str], out: io.TextIOBase) -> None:
    """Write dict rows as CSV; ``None`` becomes an empty field, a time ISO 8601, a would-be
    formula neutralised (:func:`csv_cell`); extra keys keep their order."""
    rows = iter(rows)
    first = next(rows, None)
    fieldnames = list(columns) if first is None else list(first)
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow([csv_cell(name) for name in fieldnames])
    for row in ([] if first is None else [first]):
        writer.writerow([csv_cell(row.get(name)) for name in fieldnames])
    writer.writerows([csv_cell(row.get(name)) for name in fieldnames] for row in rows)


def csv_cell(value: object) -> object:
    """``value`` as a CSV cell: text starting like a formula gets a leading ``'``."""
    if isinstance(value, datetime):
        return value.isoformat()
    if isinstance(value, str) and value.startswith(FORMULA_STARTS) \
            and not _PLAIN_NUMBER.fullmatch(value):
        return "'" + value
    return value
