"""Monitoring of issued forecasts: realised accuracy by target period against what the
backtest promised, interval coverage to date against the nominal levels, and each raised
flag marked at the period it points at."""

from __future__ import annotations

import bisect
from collections.abc import Sequence

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from backtest.ledger import Flag, MonitoringReport, RealisedPoint
from service.views.charts.calibration import LEVEL_LOOKS
from service.views.charts.style import (
    BLACK,
    BLUE,
    PURPLE,
    label_periods,
    new_figure,
    period_axis_label,
    place_legend,
    set_title,
    styled,
)

EMPTY_MESSAGE = "No outcomes yet: no issued forecast has reached an observed period."
NO_BACKTEST = "no backtest to compare with"
MASE_AXIS = "MASE (× naive error)"
COVERAGE_AXIS = "coverage to date (% inside)"
_FLAG_DASHES = (0, (4, 1.5, 1, 1.5))
_FLAG_NAMES = {"coverage": "coverage", "accuracy": "accuracy", "level_shift": "level shift"}


@styled
def monitoring_chart(report: MonitoringReport, *, candidate_label: str | None = None,
                     frequency: str | None = None) -> Figure:
    """Top: realised MASE per target period and the backtest MASE at the same horizons.
    Bottom: per level, the share of actuals inside the issued intervals so far, against the
    nominal level. Raised flags are vertical marks at their ``first_period``.

    Without outcomes the figure says so instead of drawing empty panels.
    """
    title = f"{report.series_key}: monitoring of {candidate_label or report.candidate_id}"
    if not report.realised:
        return _empty_figure(title)
    periods = [p.period for p in report.realised]
    x = np.arange(len(periods))
    fig = new_figure(4.8)
    accuracy_ax, coverage_ax = fig.subplots(2, 1, sharex=True, height_ratios=(3, 2.4))
    _draw_accuracy(accuracy_ax, report, x)
    _draw_coverage(coverage_ax, report.realised, x)
    _mark_flags(accuracy_ax, coverage_ax, periods, [f for f in report.flags if f.raised])
    label_periods(coverage_ax, periods, x)
    coverage_ax.set_xlabel(f"target {period_axis_label(frequency)}")
    place_legend(fig, [*accuracy_ax.get_legend_handles_labels()[0],
                       *coverage_ax.get_legend_handles_labels()[0]], columns=3)
    set_title(fig, title)
    return fig


def flag_label(flag: Flag) -> str:
    """The short name of a flag on the chart: ``coverage 95 %``, ``accuracy``, ..."""
    name = _FLAG_NAMES[flag.rule]
    return name if flag.level is None else f"{name} {flag.level} %"


def running_coverage(realised: Sequence[RealisedPoint], level: int) -> np.ndarray:
    """Per period, the share of actuals inside the ``level`` % intervals up to and including
    it, each period weighted by its number of outcomes; NaN before the level first appears."""
    hits = np.array([p.coverage[level] * p.count if level in p.coverage else 0.0
                     for p in realised])
    counts = np.array([p.count if level in p.coverage else 0 for p in realised], dtype=float)
    total = np.cumsum(counts)
    safe = np.where(total > 0, total, 1.0)
    return np.where(total > 0, np.cumsum(hits) / safe, np.nan)


def _empty_figure(title: str) -> Figure:
    fig = new_figure(1.6)
    ax = fig.subplots()
    ax.set_axis_off()
    ax.text(0.5, 0.5, EMPTY_MESSAGE, ha="center", va="center", transform=ax.transAxes)
    set_title(fig, title)
    return fig


def _draw_accuracy(ax: Axes, report: MonitoringReport, x: np.ndarray) -> None:
    realised = _floats([p.mase for p in report.realised])
    expected = _floats([p.expected_mase for p in report.realised])
    ax.plot(x, realised, color=BLUE, marker="o", linewidth=1.2, label="realised MASE")
    compared = np.isfinite(expected).any()
    if compared:
        ax.plot(x, expected, color=BLACK, linestyle=(0, (5, 2)), linewidth=1.2,
                label="backtest MASE, same horizons")
    ax.set_ylim(bottom=0)
    ax.set_ylabel(MASE_AXIS)
    ax.set_title("realised accuracy by target period ("
                 + ("all horizons that reached it)" if compared else f"{NO_BACKTEST})"))


def _draw_coverage(ax: Axes, realised: Sequence[RealisedPoint], x: np.ndarray) -> None:
    levels = sorted({level for p in realised for level in p.coverage})
    for look, level in zip(LEVEL_LOOKS, levels):
        ax.axhline(level, color=look.color, linewidth=0.9, linestyle=(0, (2, 2)),
                   label=f"{level} %: nominal")
        ax.plot(x, 100 * running_coverage(realised, level),
                label=f"{level} %: realised to date", **look.plot_kwargs())
    ax.set_ylim(0, 105)
    ax.set_ylabel(COVERAGE_AXIS)
    ax.set_title("interval coverage to date")


def _mark_flags(accuracy_ax: Axes, coverage_ax: Axes, periods: Sequence[str],
                flags: Sequence[Flag]) -> None:
    """A vertical mark per period some raised flag points at, with the flags' names above
    the data, one row per marked period so that neighbouring names never overlap."""
    names: dict[int, list[str]] = {}
    for flag in flags:
        if flag.first_period is not None:
            names.setdefault(_position(periods, flag.first_period), []).append(flag_label(flag))
    for row, (at, named) in enumerate(sorted(names.items())):
        # gids become SVG ids, so each is unique
        accuracy_ax.axvline(at, color=PURPLE, linestyle=_FLAG_DASHES, linewidth=1.2,
                            gid=f"flag-{row}", label=None if row else "raised flag")
        coverage_ax.axvline(at, color=PURPLE, linestyle=_FLAG_DASHES, linewidth=1.2,
                            gid=f"flag-{row}-coverage")
        right_half = at > (len(periods) - 1) / 2  # names run towards the middle
        accuracy_ax.annotate(", ".join(named), (at, 1.0), xycoords=("data", "axes fraction"),
                             xytext=(-3 if right_half else 3, -2 - 11 * row),
                             textcoords="offset points", ha="right" if right_half else "left",
                             va="top", fontsize=8, color=PURPLE, gid=f"flag-label-{row}",
                             bbox={"facecolor": "white", "edgecolor": "none", "pad": 1})
    if names:  # headroom for the names
        low, high = accuracy_ax.get_ylim()
        accuracy_ax.set_ylim(low, high + (high - low) * 0.12 * (len(names) + 1))


def _position(periods: Sequence[str], period: str) -> int:
    """The index of ``period``, or of the first later period drawn (labels sort in time)."""
    return min(bisect.bisect_left(list(periods), period), len(periods) - 1)


def _floats(values: Sequence[float | None]) -> np.ndarray:
    return np.array([np.nan if v is None else v for v in values], dtype=float)
