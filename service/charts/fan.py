"""Forecast fan chart: recent history, a point forecast, its central bands and the actuals."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from matplotlib.figure import Figure

from backtest.results import FoldResult
from service.charts.style import (
    BLACK,
    BLUE,
    GREY,
    VERMILLION,
    add_legend,
    label_periods,
    new_figure,
    period_axis_label,
    set_title,
    styled,
    value_axis_label,
)

#: Band opacity by rank of width: the widest band is palest.
_BAND_ALPHAS = (0.18, 0.36, 0.54)


@dataclass(frozen=True)
class ForecastBands:
    """A forecast from one origin: target periods, point forecast, bounds per level (in %)
    and the actuals where known (``None`` for periods not yet observed)."""

    origin: str
    periods: tuple[str, ...]
    point: tuple[float, ...]
    lower: Mapping[int, Sequence[float]]
    upper: Mapping[int, Sequence[float]]
    actuals: tuple[float | None, ...] = ()

    @classmethod
    def from_fold(cls, fold: FoldResult) -> ForecastBands:
        """The forecast a completed backtest fold made."""
        if fold.status != "ok" or fold.point is None:
            raise ValueError(f"fold {fold.fold} of {fold.candidate_id} failed: no forecast")
        return cls(fold.origin, fold.periods, fold.point, fold.lower, fold.upper, fold.actuals)


@styled
def fan_chart(forecast: ForecastBands, history_periods: Sequence[str],
              history_values: Sequence[float], *, series_key: str, candidate_label: str,
              unit: str | None = None, frequency: str | None = None) -> Figure:
    """History up to the origin, the point forecast, every band (widest palest), actuals.

    ``history_periods`` must include the origin; observations after it are not drawn as
    history (the actuals show them).
    """
    periods = list(history_periods)
    if forecast.origin not in periods:
        raise ValueError(f"the history does not reach the origin {forecast.origin}")
    cut = periods.index(forecast.origin) + 1
    history_x = np.arange(cut)
    ahead_x = np.arange(cut, cut + len(forecast.periods))
    fig = new_figure(3.1)
    ax = fig.subplots()
    for alpha, level in zip(_BAND_ALPHAS, sorted(forecast.lower, reverse=True)):
        ax.fill_between(ahead_x, forecast.lower[level], forecast.upper[level], color=BLUE,
                        alpha=alpha, linewidth=0, label=f"{level} % interval")
    ax.plot(history_x, np.asarray(history_values, dtype=float)[:cut], color=BLACK,
            linewidth=1.4, label="history")
    ax.plot(ahead_x, forecast.point, color=BLUE, linewidth=1.8, label="point forecast")
    actuals = np.array([np.nan if a is None else a for a in forecast.actuals], dtype=float)
    if np.isfinite(actuals).any():
        ax.plot(ahead_x[:len(actuals)], actuals, color=VERMILLION, marker="o",
                linestyle=(0, (1, 1.5)), linewidth=1.2, label="actual")
    ax.axvline(cut - 1, color=GREY, linestyle=":", linewidth=1.0)
    ax.annotate(f"origin {forecast.origin}", (cut - 1, 1.0), xycoords=("data", "axes fraction"),
                xytext=(-3, -3), textcoords="offset points", ha="right", va="top", fontsize=8,
                color="#4D4D4D")
    label_periods(ax, [*periods[:cut], *forecast.periods], [*history_x, *ahead_x])
    ax.set_xlabel(period_axis_label(frequency))
    ax.set_ylabel(value_axis_label(unit))
    add_legend(fig, ax, columns=5)
    set_title(fig, f"{series_key}: {candidate_label}, forecast from {forecast.origin}")
    return fig
