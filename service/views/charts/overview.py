"""Backtest overview: every candidate's score by horizon on one series, benchmark marked."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from backtest.results import RankRow, SeriesResult
from service.views.charts.style import (
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


#: Candidates that set the value axis: the best this many, and the benchmark.
CONTENDERS = 3
#: Lines are clipped only when they would stretch the axis by more than this factor.
STRETCH = 1.5


def _clip_outliers(ax: Axes, ranked: list[RankRow], lines: dict[str, np.ndarray], benchmark_id: str,
                   horizons: np.ndarray, colors: dict[str, str]) -> None:
    """Scale the value axis to the contenders; mark lines that leave it at the top edge
    and name them with their largest value."""
    contenders = [r.candidate_id for r in ranked[:CONTENDERS]] + [benchmark_id]
    shown = np.concatenate([lines[c] for c in contenders if c in lines])
    everything = np.concatenate(list(lines.values()))
    if not np.isfinite(shown).any():
        return
    top = float(np.nanmax(shown)) * 1.12
    if not np.nanmax(everything) > STRETCH * top:
        return
    ax.set_ylim(min(0.0, float(np.nanmin(everything))), top)
    off = []
    for row in ranked:
        ys = lines[row.candidate_id]
        above = ys > top
        if above.any():
            ax.plot(horizons[above], np.full(above.sum(), top), linestyle="none", marker="^",
                    color=colors[row.candidate_id], clip_on=False,
                    markersize=5, gid=f"off-scale-{row.candidate_id}")
            off.append(f"{row.label} (up to {np.nanmax(ys):.2f})")
    ax.annotate("off scale, ▲ at the top edge: " + "; ".join(off), (0.99, 0.99),
                xycoords="axes fraction", ha="right", va="top", fontsize=7.5,
                color="#4D4D4D", gid="off-scale-note").set_in_layout(False)


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
    ranked = sorted(result.ranking, key=lambda r: (r.rank is None, r.rank or 0))
    # looks in ranking order: the best-ranked candidate gets the first, strongest colour
    looks = candidate_looks([r.candidate_id for r in ranked], result.benchmark_id)
    best = next((r.candidate_id for r in ranked if not r.is_benchmark), None)
    lines = {}
    for row in ranked:
        ys = [values.get((row.candidate_id, int(h))) for h in horizons]
        lines[row.candidate_id] = np.array([np.nan if y is None else y * axis.factor
                                            for y in ys], dtype=float)
        label = f"{row.label} (benchmark)" if row.is_benchmark else row.label
        kwargs = looks[row.candidate_id].plot_kwargs()
        if row.candidate_id == best:
            kwargs["linewidth"] = 2.0  # the benchmark keeps the thickest line
        ax.plot(horizons, lines[row.candidate_id], label=label,
                zorder=4 if row.candidate_id == best else 3 if row.is_benchmark else 2,
                **kwargs)
    if metric != "coverage":
        _clip_outliers(ax, ranked, lines, result.benchmark_id, horizons,
                       {c: look.color for c, look in looks.items()})
    ax.set_xticks(horizons)
    ax.set_xlabel(f"horizon ({step_word(result.series.get('frequency'))} ahead)")
    ax.set_ylabel(metric_axis_label(metric, level, unit))
    add_legend(fig, ax, columns=3)
    what = axis.name if level is None else f"{axis.name} of the {level} % interval"
    set_title(fig, f"{result.series['key']}: {what} by horizon")
    return fig
