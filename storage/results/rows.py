"""Conversion between one series' results and the tidy rows of the result tables.

NaN is stored as NULL (SQLite cannot hold NaN) and read back as NaN inside forecast tuples
and parameters, as ``None`` where the result type allows ``None``; infinities are kept.
JSON documents (series summary, evidence, parameters) are stored through
:func:`backtest.results.to_jsonable`, which turns NaN and infinities into ``null``.
"""

from __future__ import annotations

import math
from collections import defaultdict
from collections.abc import Mapping, Sequence
from datetime import datetime
from typing import Any

from sqlalchemy import Table

from backtest.results import CandidateInfo, FoldResult, RankRow, Score, SeriesResult, to_jsonable
from storage.audit import Row
from storage.db import (
    FoldRecord,
    FoldWarning,
    ForecastBound,
    ForecastRecord,
    RankRecord,
    ResultCandidate,
    ScoreRecord,
    SeriesResultRecord,
)

UNIT = SeriesResultRecord.__table__
CANDIDATES = ResultCandidate.__table__
FOLDS = FoldRecord.__table__
FORECASTS = ForecastRecord.__table__
BOUNDS = ForecastBound.__table__
WARNINGS = FoldWarning.__table__
SCORES = ScoreRecord.__table__
RANKS = RankRecord.__table__

Rows = dict[Table, list[dict[str, Any]]]


def unit_rows(run_id: int, series_version_id: int, result: SeriesResult, *,
              written_at: datetime, written_by: str) -> Rows:
    """Every row of one series' results, by table."""
    key = {"run_id": run_id, "series_version_id": series_version_id}
    rows: Rows = {UNIT: [{**key, "benchmark_id": result.benchmark_id,
                          "summary": to_jsonable(result.series),
                          "evidence": to_jsonable(result.evidence),
                          "written_at": written_at, "written_by": written_by}],
                  CANDIDATES: [{**key, "candidate_id": c.candidate_id, "position": i,
                                "label": c.label, "added_as_benchmark": c.added_as_benchmark}
                               for i, c in enumerate(result.candidates)],
                  FOLDS: [], FORECASTS: [], BOUNDS: [], WARNINGS: [],
                  SCORES: [{**key, **_score_row(s), "position": i}
                           for i, s in enumerate(result.scores)],
                  RANKS: [{**key, **_rank_row(r), "position": i}
                          for i, r in enumerate(result.ranking)]}
    for position, fold in enumerate(result.folds):
        _add_fold(rows, {**key, "candidate_id": fold.candidate_id, "fold": fold.fold},
                  fold, position)
    return rows


def series_result_of(series_key: str, rows: Mapping[Table, Sequence[Row]],
                     specs: Mapping[str, dict[str, Any]]) -> SeriesResult:
    """Rebuild one series' results from its rows; ``specs`` maps candidate id to spec."""
    unit = rows[UNIT][0]
    candidates = tuple(
        CandidateInfo(r["candidate_id"], r["label"], specs[r["candidate_id"]],
                      r["added_as_benchmark"])
        for r in sorted(rows[CANDIDATES], key=lambda r: r["position"]))
    return SeriesResult(unit["summary"], candidates, unit["benchmark_id"],
                        folds_of(series_key, rows), _scores(rows[SCORES]),
                        _ranking(rows[RANKS]), unit["evidence"])


def _add_fold(rows: Rows, key: dict[str, Any], fold: FoldResult, position: int) -> None:
    rows[FOLDS].append({
        **key, "position": position, "origin": fold.origin, "train_start": fold.train_start,
        "train_size": int(fold.train_size), "reestimated": bool(fold.reestimated),
        "status": fold.status, "reason": fold.reason,
        "params": None if fold.params is None else to_jsonable(fold.params),
        "fit_summary": None if fold.fit_summary is None else to_jsonable(fold.fit_summary),
        "has_point": fold.point is not None, "scale": _number(fold.scale),
        "scale_sq": _number(fold.scale_sq), "converged": fold.converged})
    rows[WARNINGS].extend({**key, "position": i, "message": message}
                          for i, message in enumerate(fold.warnings))
    # The bulk of a unit's rows: built with literal keys and no call per value.
    run_id, version = key["run_id"], key["series_version_id"]
    cid, number, origin = fold.candidate_id, fold.fold, fold.origin
    actuals = _numbers(fold.actuals)
    points = [None] * len(actuals) if fold.point is None else _numbers(fold.point)
    bounds = [(int(level), _numbers(lower), _numbers(fold.upper[level]))
              for level, lower in fold.lower.items()]
    rows[FORECASTS].extend(
        {"run_id": run_id, "series_version_id": version, "candidate_id": cid, "fold": number,
         "horizon": h, "origin": origin, "period": period, "actual": actual, "point": point}
        for h, period, actual, point in zip(range(1, len(actuals) + 1), fold.periods, actuals,
                                            points))
    rows[BOUNDS].extend(
        {"run_id": run_id, "series_version_id": version, "candidate_id": cid, "fold": number,
         "horizon": h + 1, "level": level, "lower": lower[h], "upper": upper[h]}
        for h in range(len(actuals)) for level, lower, upper in bounds)


def _score_row(score: Score) -> dict[str, Any]:
    return {"candidate_id": score.candidate_id, "metric": score.metric, "level": score.level,
            "horizon": score.horizon, "value": _number(score.value), "count": int(score.count),
            "note": score.note, "common_value": _number(score.common_value),
            "common_count": None if score.common_count is None else int(score.common_count),
            "common_note": score.common_note, "common_folds": score.common_folds}


def _rank_row(row: RankRow) -> dict[str, Any]:
    return {"candidate_id": row.candidate_id, "rank": row.rank, "label": row.label,
            "score": _number(row.score), "ratio_to_benchmark": _number(row.ratio_to_benchmark),
            "is_benchmark": row.is_benchmark, "folds_ok": int(row.folds_ok),
            "folds_failed": int(row.folds_failed),
            "folds_not_converged": int(row.folds_not_converged),
            "in_confidence_set": row.in_confidence_set,
            "beats_benchmark": row.beats_benchmark, "calibration_zone": row.calibration_zone,
            "score_own_folds": _number(row.score_own_folds), "common_folds": row.common_folds,
            "score_count": row.score_count, "score_possible": row.score_possible}


FOLD_TABLES = (FOLDS, FORECASTS, BOUNDS, WARNINGS)
"""The tables :func:`folds_of` reads."""


def folds_of(series_key: str, rows: Mapping[Table, Sequence[Row]]) -> tuple[FoldResult, ...]:
    """The folds in the rows of :data:`FOLD_TABLES`, in stored order."""
    forecasts = _grouped(rows[FORECASTS], "horizon")
    warnings = _grouped(rows[WARNINGS], "position")
    bounds: dict[tuple[str, int], dict[int, list[Row]]] = defaultdict(lambda: defaultdict(list))
    for r in sorted(rows[BOUNDS], key=lambda r: r["horizon"]):
        bounds[r["candidate_id"], r["fold"]][r["level"]].append(r)
    out = []
    for f in sorted(rows[FOLDS], key=lambda r: r["position"]):
        key = (f["candidate_id"], f["fold"])
        steps, levels = forecasts.get(key, []), bounds.get(key, {})
        out.append(FoldResult(
            series_key=series_key, candidate_id=f["candidate_id"], fold=f["fold"],
            origin=f["origin"], train_start=f["train_start"], train_size=f["train_size"],
            reestimated=f["reestimated"], status=f["status"], reason=f["reason"],
            params=None if f["params"] is None else {k: _float(v) for k, v in
                                                     f["params"].items()},
            warnings=tuple(w["message"] for w in warnings.get(key, [])),
            periods=tuple(s["period"] for s in steps),
            actuals=tuple(_float(s["actual"]) for s in steps),
            point=tuple(_float(s["point"]) for s in steps) if f["has_point"] else None,
            lower={lv: tuple(_float(b["lower"]) for b in bs) for lv, bs in sorted(levels.items())},
            upper={lv: tuple(_float(b["upper"]) for b in bs) for lv, bs in sorted(levels.items())},
            scale=f["scale"], scale_sq=f["scale_sq"], fit_summary=f["fit_summary"],
            converged=f["converged"]))
    return tuple(out)


def _scores(rows: Sequence[Row]) -> tuple[Score, ...]:
    return tuple(Score(r["candidate_id"], r["horizon"], r["metric"], r["level"], r["value"],
                       r["count"], r["note"], r["common_value"], r["common_count"],
                       r["common_note"], r["common_folds"])
                 for r in sorted(rows, key=lambda r: r["position"]))


def _ranking(rows: Sequence[Row]) -> tuple[RankRow, ...]:
    return tuple(RankRow(r["rank"], r["candidate_id"], r["label"], r["score"],
                         r["ratio_to_benchmark"], r["is_benchmark"], r["folds_ok"],
                         r["folds_failed"],
                         r["in_confidence_set"], r["beats_benchmark"], r["calibration_zone"],
                         r["folds_not_converged"], r["score_own_folds"], r["common_folds"],
                         r["score_count"], r["score_possible"])
                 for r in sorted(rows, key=lambda r: r["position"]))


def _grouped(rows: Sequence[Row], order: str) -> dict[tuple[str, int], list[Row]]:
    groups: dict[tuple[str, int], list[Row]] = defaultdict(list)
    for r in sorted(rows, key=lambda r: r[order]):
        groups[r["candidate_id"], r["fold"]].append(r)
    return groups


def _number(value: float | None) -> float | None:
    return None if value is None or math.isnan(value) else float(value)


def _numbers(values: Sequence[float]) -> list[float | None]:
    """:func:`_number` of each value (``v != v`` is NaN's test, inlined)."""
    return [None if v is None or v != v else float(v) for v in values]


def _float(value: float | None) -> float:
    return math.nan if value is None else float(value)
