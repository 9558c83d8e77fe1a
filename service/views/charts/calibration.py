"""Interval calibration of one candidate: coverage by horizon against the nominal levels,
with the binomial range a calibrated interval would fall in, and the h = 1 misses by origin.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from scipy import stats

from backtest.results import FoldResult, SeriesResult
from service.views.charts.style import (
    BLUE,
    GREEN,
    GREY,
    VERMILLION,
    Look,
    add_legend,
    label_periods,
    new_figure,
    set_title,
    step_word,
    styled,
)

LEVEL_LOOKS = (Look(BLUE, "o"), Look(VERMILLION, "s", (5, 2)), Look(GREEN, "^", (1.5, 1.5)))
#: Horizontal shift between the levels' observed-coverage lines, in horizons.
DODGE = 0.14
#: Probability mass of the binomial range drawn around each nominal level.
RANGE_MASS = 0.95


def binomial_range(nominal: float, trials: Sequence[int]) -> tuple[np.ndarray, np.ndarray]:
    """Central 95 % range of the observed coverage (as a share) if the true coverage were
    ``nominal``, for each number of trials; NaN where there are none."""
    n = np.asarray(trials, dtype=float)
    tail = (1 - RANGE_MASS) / 2
    with np.errstate(invalid="ignore", divide="ignore"):
        low = np.where(n > 0, stats.binom.ppf(tail, n, nominal) / n, np.nan)
        high = np.where(n > 0, stats.binom.ppf(1 - tail, n, nominal) / n, np.nan)
    return low, high


def one_step_misses(folds: Sequence[FoldResult], level: int) -> list[bool | None]:
    """Per fold in origin order: whether the h = 1 actual fell outside the ``level`` %
    interval (bounds count as inside); ``None`` for a failed fold."""
    out: list[bool | None] = []
    for f in sorted(folds, key=lambda f: f.fold):
        if f.status != "ok":
            out.append(None)
        else:
            out.append(not f.lower[level][0] <= f.actuals[0] <= f.upper[level][0])
    return out


@styled
def calibration_chart(result: SeriesResult, candidate_id: str) -> Figure:
    """Top: observed coverage by horizon per level, nominal line and binomial range.
    Bottom: for each level, which origins missed at h = 1."""
    report = result.evidence.get("calibration", {}).get(candidate_id)
    if not report:
        raise ValueError(f"no calibration evidence for {candidate_id}")
    label = next(c.label for c in result.candidates if c.candidate_id == candidate_id)
    fig = new_figure(4.4)
    coverage_ax, miss_ax = fig.subplots(2, 1, height_ratios=(3, 1.6))
    for i, (look, level_report) in enumerate(zip(LEVEL_LOOKS, report)):
        _draw_coverage(coverage_ax, level_report, look, DODGE * (i - (len(report) - 1) / 2))
    coverage_ax.set_title("observed coverage by horizon")
    coverage_ax.set_xlabel(f"horizon ({step_word(result.series.get('frequency'))} ahead)")
    coverage_ax.set_ylabel("coverage (% of actuals inside)")
    folds = [f for f in result.folds if f.candidate_id == candidate_id]
    _draw_misses(miss_ax, folds, [r["level"] for r in report])
    add_legend(fig, coverage_ax, columns=len(report))
    set_title(fig, f"{result.series['key']}: interval calibration of {label}")
    return fig


def _draw_coverage(ax: Axes, level_report: dict[str, Any], look: Look, dodge: float) -> None:
    """Observed coverage shifted by ``dodge`` along the horizon, so that levels with the
    same coverage (often 100 %) stay visible side by side."""
    level, nominal = level_report["level"], level_report["nominal_coverage"]
    rows = level_report["by_horizon"]
    horizons = np.array([r["horizon"] for r in rows])
    observed = np.array([np.nan if r["coverage"] is None else 100 * r["coverage"]
                         for r in rows], dtype=float)
    low, high = binomial_range(nominal, [r["trials"] for r in rows])
    ax.fill_between(horizons, 100 * low, 100 * high, color=look.color, alpha=0.13,
                    linewidth=0, label=f"{level} %: range if calibrated")
    ax.axhline(100 * nominal, color=look.color, linewidth=0.9, linestyle=(0, (2, 2)),
               label=f"{level} %: nominal")
    ax.plot(horizons + dodge, observed, label=f"{level} %: observed", **look.plot_kwargs())
    ax.set_xticks(horizons)


def _draw_misses(ax: Axes, folds: Sequence[FoldResult], levels: Sequence[int]) -> None:
    ordered = sorted(folds, key=lambda f: f.fold)
    x = np.arange(len(ordered))
    for row, (look, level) in enumerate(zip(LEVEL_LOOKS, levels)):
        misses = one_step_misses(ordered, level)
        hit_x = [i for i, m in zip(x, misses) if m is False]
        miss_x = [i for i, m in zip(x, misses) if m]
        ax.plot(hit_x, [row] * len(hit_x), linestyle="none", marker="|", color=GREY,
                markersize=8, gid=f"hits-{level}")
        ax.plot(miss_x, [row] * len(miss_x), linestyle="none", marker=look.marker,
                color=look.color, markersize=6, gid=f"misses-{level}")
    failed = [i for i, f in zip(x, ordered) if f.status != "ok"]
    if failed:
        ax.plot(failed, [-0.6] * len(failed), linestyle="none", marker="x", color=GREY,
                gid="failed")
    ax.set_yticks(range(len(levels)), [f"{lv} %" for lv in levels])
    ax.set_ylim(-0.8 if failed else -0.5, len(levels) - 0.5)
    ax.grid(False)
    label_periods(ax, [f.origin for f in ordered], x)
    ax.set_title("misses at h = 1 by origin (marker: miss, tick: hit"
                 + (", x: failed fold)" if failed else ")"))
    ax.set_xlabel("origin (last training period)")
    ax.set_ylabel("interval")
