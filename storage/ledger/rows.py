"""Conversion between issued forecasts and outcomes and the tidy rows of the ledger tables.

NaN is stored as NULL (SQLite cannot hold NaN) and read back as NaN; infinities (the bounds
of an unbounded interval) are kept. Parameters are a JSON document, where NaN and the
infinities are written as the strings ``"nan"``, ``"inf"`` and ``"-inf"`` so that every
value comes back exactly. A forecast's levels are stored as text (``"80,95"``) because
they are part of the inputs a re-issue is matched on.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from datetime import datetime
from typing import Any

from backtest.ledger import IssuedForecast, Outcome
from storage.audit import Row


def stored(value: float) -> float | None:
    """A float as stored: NaN becomes NULL."""
    return None if math.isnan(value) else float(value)


def loaded(value: float | None) -> float:
    """A stored float as read: NULL becomes NaN."""
    return math.nan if value is None else value


def levels_text(levels: Sequence[int]) -> str:
    """The stored form of a level list."""
    return ",".join(str(level) for level in levels)


def header_row(forecast: IssuedForecast, *, series_id: int, series_version_id: int,
               issued_by: str, issued_at: datetime) -> dict[str, Any]:
    """The ``issued_forecast`` row of a forecast, without its id."""
    return {"series_id": series_id, "series_version_id": series_version_id,
            "candidate_id": forecast.candidate_id, "label": forecast.label,
            "horizon": forecast.horizon, "levels": levels_text(forecast.levels),
            "seed": forecast.seed, "origin": forecast.origin,
            "params": {name: _json_float(value) for name, value in forecast.params.items()},
            "scale": stored(forecast.scale), "scale_sq": stored(forecast.scale_sq),
            "software": dict(forecast.software), "warnings": list(forecast.warnings),
            "issued_by": issued_by, "issued_at": issued_at}


def point_rows(forecast_id: int, forecast: IssuedForecast) -> list[dict[str, Any]]:
    """One ``issued_point`` row per horizon."""
    return [{"forecast_id": forecast_id, "horizon": h, "period": period, "point": stored(point)}
            for h, (period, point) in enumerate(zip(forecast.periods, forecast.point), start=1)]


def bound_rows(forecast_id: int, forecast: IssuedForecast) -> list[dict[str, Any]]:
    """One ``issued_bound`` row per horizon and level."""
    return [{"forecast_id": forecast_id, "horizon": h, "level": level,
             "lower": stored(forecast.lower[level][h - 1]),
             "upper": stored(forecast.upper[level][h - 1])}
            for h in range(1, forecast.horizon + 1) for level in forecast.levels]


def forecast_of(header: Row, points: Sequence[Row], bounds: Sequence[Row], *, series_key: str,
                season_length: int, fingerprint: str,
                candidate_spec: Mapping[str, Any]) -> IssuedForecast:
    """Rebuild a forecast from its header, its points (by horizon) and its bounds."""
    levels = tuple(int(level) for level in header["levels"].split(","))
    lower: dict[int, list[float]] = {level: [] for level in levels}
    upper: dict[int, list[float]] = {level: [] for level in levels}
    for row in sorted(bounds, key=lambda r: (r["horizon"], r["level"])):
        lower[row["level"]].append(loaded(row["lower"]))
        upper[row["level"]].append(loaded(row["upper"]))
    points = sorted(points, key=lambda r: r["horizon"])
    return IssuedForecast(
        series_key=series_key, fingerprint=fingerprint, candidate_id=header["candidate_id"],
        candidate_spec=dict(candidate_spec), label=header["label"], season_length=season_length,
        origin=header["origin"], periods=tuple(r["period"] for r in points),
        point=tuple(loaded(r["point"]) for r in points),
        lower={level: tuple(values) for level, values in lower.items()},
        upper={level: tuple(values) for level, values in upper.items()}, levels=levels,
        seed=header["seed"],
        params={name: float(value) for name, value in header["params"].items()},
        scale=loaded(header["scale"]), scale_sq=loaded(header["scale_sq"]),
        software=dict(header["software"]), warnings=tuple(header["warnings"]))


def outcome_rows(key: Mapping[str, int], outcomes: Sequence[Outcome]) -> list[dict[str, Any]]:
    """One ``outcome`` row per horizon; ``key`` holds forecast_id and series_version_id."""
    return [{**key, "horizon": o.horizon, "period": o.period, "actual": stored(o.actual),
             "point": stored(o.point), "error": stored(o.error),
             "scaled_error": stored(o.scaled_error),
             "smape_term": None if o.smape_term is None else stored(o.smape_term)}
            for o in outcomes]


def level_rows(key: Mapping[str, int], outcomes: Sequence[Outcome]) -> list[dict[str, Any]]:
    """One ``outcome_level`` row per horizon and level."""
    return [{**key, "horizon": o.horizon, "level": level, "hit": o.hits[level],
             "interval_score": stored(o.interval_scores[level])}
            for o in outcomes for level in sorted(o.hits)]


def outcome_of(row: Row, levels: Sequence[Row]) -> Outcome:
    """Rebuild an outcome from its row and its level rows.

    A NULL sMAPE term is ``None`` (undefined when actual and point are both zero).
    """
    levels = sorted(levels, key=lambda r: r["level"])
    return Outcome(horizon=row["horizon"], period=row["period"], actual=loaded(row["actual"]),
                   point=loaded(row["point"]), error=loaded(row["error"]),
                   scaled_error=loaded(row["scaled_error"]), smape_term=row["smape_term"],
                   hits={r["level"]: r["hit"] for r in levels},
                   interval_scores={r["level"]: loaded(r["interval_score"]) for r in levels})


def _json_float(value: float) -> float | str:
    return float(value) if math.isfinite(value) else repr(float(value))
