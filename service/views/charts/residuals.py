"""Residual diagnostics of a candidate's full-series fit: ACF and PACF bars with the
+/- 1.96/sqrt(n) bounds, and, given the residuals themselves, a time plot and a normal QQ plot.

The stored evidence keeps the ACF/PACF values but not the residual series; pass it (for
instance from :func:`service.views.report.residuals.full_fit_residuals`) to get the lower panels.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TypedDict

import numpy as np
from matplotlib.artist import Artist
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch
from scipy import stats

from backtest.results import SeriesResult
from service.views.charts.style import (
    BLACK,
    BLUE,
    GREY,
    VERMILLION,
    label_periods,
    new_figure,
    period_axis_label,
    place_legend,
    set_title,
    step_word,
    styled,
)


class _BarLook(TypedDict, total=False):
    facecolor: str
    hatch: str
    edgecolor: str


class _LineLook(TypedDict):
    color: str
    linestyle: tuple[float, tuple[float, float]]
    linewidth: float


_INSIDE: _BarLook = {"facecolor": BLUE}
_OUTSIDE: _BarLook = {"facecolor": VERMILLION, "hatch": "////", "edgecolor": BLACK}
_BOUND: _LineLook = {"color": BLACK, "linestyle": (0, (4, 2)), "linewidth": 0.9}


def _legend_handles() -> list[Artist]:
    return [Patch(label="within the bounds", **_INSIDE),
            Patch(label="beyond the bounds", **_OUTSIDE),
            Line2D([], [], label="bounds +/- 1.96/sqrt(n)", **_BOUND)]


def normal_quantiles(n: int) -> np.ndarray:
    """Expected standard-normal order statistics by Blom's (1958) plotting positions."""
    quantiles: np.ndarray = stats.norm.ppf((np.arange(1, n + 1) - 0.375) / (n + 0.25))
    return quantiles


@styled
def residual_chart(result: SeriesResult, candidate_id: str, *,
                   residuals: Sequence[float] | np.ndarray | None = None,
                   periods: Sequence[str] | None = None,
                   residual_unit: str = "model scale") -> Figure:
    """ACF and PACF panels from the stored diagnostics; with ``residuals`` (and their
    ``periods``, one label each) also a residual time plot and a QQ plot."""
    diagnostics = result.evidence.get("diagnostics", {}).get(candidate_id) or {}
    acf = (diagnostics.get("residuals") or {}).get("acf") or {}
    if acf.get("acf") is None:
        raise ValueError(f"no residual autocorrelations for {candidate_id}")
    if residuals is not None and (periods is None or len(periods) != len(residuals)):
        raise ValueError("residuals need one period label each")
    fig = new_figure(4.6 if residuals is not None else 2.5)
    axes = fig.subplots(2 if residuals is not None else 1, 2, squeeze=False)
    lag_unit = step_word(result.series.get("frequency"))
    _correlation_bars(axes[0][0], acf["acf"], acf["bound"], "ACF", lag_unit)
    _correlation_bars(axes[0][1], acf["pacf"], acf["bound"], "PACF", lag_unit)
    if residuals is not None and periods is not None:
        values = np.asarray(residuals, dtype=float)
        _time_plot(axes[1][0], values, periods, residual_unit, result.series.get("frequency"))
        _qq_plot(axes[1][1], values)
    place_legend(fig, _legend_handles(), columns=3)
    label = diagnostics.get("label", candidate_id)
    set_title(fig, f"{result.series['key']}: residuals of {label} fitted to the whole series "
                   f"(n = {acf['n']})")
    return fig


def _correlation_bars(ax: Axes, values: Sequence[float], bound: float, name: str,
                      lag_unit: str) -> None:
    lags = np.arange(1, len(values) + 1)
    heights = np.asarray(values, dtype=float)
    outside = np.abs(heights) > bound
    ax.bar(lags[~outside], heights[~outside], width=0.6, linewidth=0, **_INSIDE)
    ax.bar(lags[outside], heights[outside], width=0.6, linewidth=0, **_OUTSIDE)
    for sign, level in (("+", bound), ("-", -bound)):
        ax.axhline(level, gid=f"{name.lower()}-bound{sign}", **_BOUND)
    ax.axhline(0, color=GREY, linewidth=0.6)
    ax.set_title(name)
    ax.set_xlabel(f"lag ({lag_unit})")
    ax.set_ylabel(f"{name} (no unit)")


def _time_plot(ax: Axes, values: np.ndarray, periods: Sequence[str], unit: str,
               frequency: str | None) -> None:
    x = np.arange(len(values))
    ax.plot(x, values, color=BLUE, linewidth=1.0, marker=".", markersize=3, gid="residuals")
    ax.axhline(0, color=GREY, linewidth=0.8)
    label_periods(ax, periods, x, max_ticks=4)
    ax.set_title("one-step residuals over time")
    ax.set_xlabel(period_axis_label(frequency))
    ax.set_ylabel(f"residual ({unit})")


def _qq_plot(ax: Axes, values: np.ndarray) -> None:
    spread = values.std(ddof=1)
    standardised = np.sort((values - values.mean()) / spread) if spread > 0 else np.sort(values)
    theory = normal_quantiles(len(values))
    ax.plot(theory, standardised, linestyle="none", marker="o", markersize=3, color=BLUE,
            gid="qq-points")
    ends = [theory[0], theory[-1]]
    ax.plot(ends, ends, color=BLACK, linestyle=(0, (4, 2)), linewidth=0.9, gid="qq-line")
    ax.set_title("normal QQ plot")
    ax.set_xlabel("standard normal quantile (no unit)")
    ax.set_ylabel("standardised residual (no unit)")
