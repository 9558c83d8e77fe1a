"""Backtest overview: every candidate's score by horizon on one series, benchmark marked."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from matplotlib.figure import Figure

from backtest.results import SeriesResult
from service.charts.style import (
    add_legend,
    candidate_looks,
    new_figure,
    set_title,
    step_word,
    styled,
)


@dataclass(frozen=True)
class MetricAxis:
    """How a score is named and measured on the value axis."""

    name: str
    measured_in: str  # "none", "percent" or "series" (the series' own unit)
    factor: float = 1.0


METRIC_AXES = {
    "mase": MetricAxis("MASE", "none"),
    "rmsse": MetricAxis("pooled RMSSE", "none"),
    "rmsse_fold_mean": MetricAxis("RMSSE, mean over origins", "none"),
    "smape": MetricAxis("sMAPE", "percent"),
    "mae": MetricAxis("MAE", "series"),
    "rmse": MetricAxis("RMSE", "series"),
    "me": MetricAxis("mean error (actual - forecast)", "series"),
    "coverage": MetricAxis("coverage", "percent", 100.0),
    "winkler": MetricAxis("interval score", "series"),
    "msis": MetricAxis("MSIS", "none"),
    "crps": MetricAxis("CRPS", "series"),
    "pinball": MetricAxis("pinball loss", "series"),
    "scaled_pinball": MetricAxis("scaled pinball loss", "none"),
}


def metric_axis_label(metric: str, level: int | None, unit: str | None) -> str:
    """The value-axis label of a score, with its unit."""
    axis = METRIC_AXES[metric]
    name = axis.name if level is None else f"{axis.name}, {level} % interval"
    measured = {"none": "no unit", "percent": "%", "series": unit or "series units"}
    return f"{name} ({measured[axis.measured_in]})"


@styled
def score_by_horizon_chart(result: SeriesResult, *, metric: str = "mase",
                           level: int | None = None, unit: str | None = None) -> Figure:
    """One line per candidate (ranking order) of ``metric`` against the horizon.

    Interval scores (``coverage``, ``winkler``, ``msis``) need ``level``; coverage is
    drawn in percent. Undefined scores leave gaps.
    """
    if metric not in METRIC_AXES:
        raise ValueError(f"unknown score {metric!r}; use one of {', '.join(METRIC_AXES)}")
    axis = METRIC_AXES[metric]
    values = {(s.candidate_id, s.horizon): s.value for s in result.scores
              if s.metric == metric and s.level == level and s.horizon is not None}
    if not values:
        raise ValueError(f"no {metric} scores at level {level} for {result.series['key']}")
    horizons = np.arange(1, max(h for _, h in values) + 1)
    fig = new_figure(3.3)
    ax = fig.subplots()
    looks = candidate_looks([c.candidate_id for c in result.candidates], result.benchmark_id)
    for row in result.ranking:
        ys = [values.get((row.candidate_id, int(h))) for h in horizons]
        ys = np.array([np.nan if y is None else y * axis.factor for y in ys], dtype=float)
        label = f"{row.label} (benchmark)" if row.is_benchmark else row.label
        ax.plot(horizons, ys, label=label, zorder=3 if row.is_benchmark else 2,
                **looks[row.candidate_id].plot_kwargs())
    ax.set_xticks(horizons)
    ax.set_xlabel(f"horizon ({step_word(result.series.get('frequency'))} ahead)")
    ax.set_ylabel(metric_axis_label(metric, level, unit))
    add_legend(fig, ax, columns=3)
    what = axis.name if level is None else f"{axis.name} of the {level} % interval"
    set_title(fig, f"{result.series['key']}: {what} by horizon")
    return fig
