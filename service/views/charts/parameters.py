"""Parameter paths: each coefficient's estimate at the re-estimating origins, with a
+/- 1.96 standard-error band where the fit reports standard errors."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from backtest.parameter_names import readable, seasonal_period
from backtest.results import FoldResult, SeriesResult
from service.views.charts.style import (
    BLUE,
    add_legend,
    label_periods,
    new_figure,
    set_title,
    styled,
)

Z95 = 1.96
_COLUMNS = 3
# Exponential-smoothing initial states are starting values (one per season position); their
# paths say where each window starts, not how the dynamics change, and would crowd out the rest.
_SKIPPED_PREFIX = "initial_"


@dataclass(frozen=True)
class ParameterPath:
    """One coefficient over the re-estimating folds: fold positions, origins, estimates and
    standard errors (NaN where not estimated or not reported)."""

    name: str
    positions: tuple[int, ...]
    origins: tuple[str, ...]
    estimates: tuple[float, ...]
    std_errors: tuple[float, ...]


def parameter_paths(folds: Sequence[FoldResult], names: Sequence[str]) -> list[ParameterPath]:
    """Paths of ``names`` over the completed re-estimating folds, in origin order; a fold's
    position is its place among all folds, so the refit cadence shows as spacing."""
    ordered = sorted(folds, key=lambda f: f.fold)
    refits = [(i, f) for i, f in enumerate(ordered)
              if f.reestimated and f.status == "ok" and f.params]
    return [ParameterPath(name, tuple(i for i, _ in refits), tuple(f.origin for _, f in refits),
                          *zip(*(_estimate(f, name) for _, f in refits)))
            for name in names]


def default_names(result: SeriesResult, candidate_id: str) -> list[str]:
    """The coefficients the stability evidence tracks (else the folds' parameters), without
    exponential-smoothing initial states."""
    stability = result.evidence.get("stability", {}).get(candidate_id) or {}
    names = [c["name"] for c in stability.get("coefficients", ())]
    if not names:
        folds = [f for f in result.folds if f.candidate_id == candidate_id and f.params]
        names = list(dict.fromkeys(n for f in folds for n in f.params or {}))
    return [n for n in names if not n.startswith(_SKIPPED_PREFIX)]


@styled
def parameter_path_chart(result: SeriesResult, candidate_id: str, *,
                         names: Sequence[str] | None = None) -> Figure:
    """One panel per coefficient; panels of coefficients the stability rule flags say so."""
    folds = [f for f in result.folds if f.candidate_id == candidate_id]
    paths = parameter_paths(folds, names if names is not None else
                            default_names(result, candidate_id))
    if not paths or len(paths[0].positions) < 2:
        raise ValueError(f"{candidate_id} has fewer than two re-estimating folds with "
                         "parameters")
    stability = result.evidence.get("stability", {}).get(candidate_id) or {}
    unstable = set(stability.get("unstable", ()))
    columns = min(_COLUMNS, len(paths))
    rows = math.ceil(len(paths) / columns)
    fig = new_figure(0.6 + 1.8 * rows)
    axes = fig.subplots(rows, columns, squeeze=False).ravel()
    all_origins = [f.origin for f in sorted(folds, key=lambda f: f.fold)]
    candidate = next(c for c in result.candidates if c.candidate_id == candidate_id)
    period = seasonal_period(candidate.spec, result.series.get("season_length"))
    for ax, path in zip(axes, paths):
        _draw_path(ax, path, readable(path.name, period), flagged=path.name in unstable)
        label_periods(ax, all_origins, range(len(all_origins)), max_ticks=3)
    for ax in axes[len(paths):]:
        ax.set_visible(False)
    for column in range(columns):
        axes[max(range(column, len(paths), columns))].set_xlabel("origin (last training period)")
    fig.supylabel("estimate (model scale)", fontsize=9)
    fullest = max(axes[:len(paths)], key=lambda a: len(a.get_legend_handles_labels()[1]))
    add_legend(fig, fullest, columns=2)
    set_title(fig, f"{result.series['key']}: parameter paths of {candidate.label} across "
                   "origins")
    return fig


def _estimate(fold: FoldResult, name: str) -> tuple[float, float]:
    row = ((fold.fit_summary or {}).get("params") or {}).get(name)
    if row is not None:
        estimate, error = row.get("estimate"), row.get("std_error")
    else:
        estimate, error = (fold.params or {}).get(name), None
    return (np.nan if estimate is None else estimate, np.nan if error is None else error)


def _draw_path(ax: Axes, path: ParameterPath, title: str, *, flagged: bool) -> None:
    """The path with its standard-error band; ``title`` is the readable name, the
    library's name follows it."""
    x = np.asarray(path.positions)
    estimates, errors = np.asarray(path.estimates), np.asarray(path.std_errors)
    if np.isfinite(errors).any():
        low, high = estimates - Z95 * errors, estimates + Z95 * errors
        ax.fill_between(x, low, high, color=BLUE, alpha=0.2, linewidth=0,
                        label="estimate +/- 1.96 s.e.")
        # Whiskers too: a fold whose neighbours lack standard errors has no band to show.
        ax.vlines(x, low, high, color=BLUE, linewidth=0.8)
    ax.plot(x, estimates, color=BLUE, marker="o", label="estimate")
    shown = title if title == path.name else f"{title} ({path.name})"
    ax.set_title(shown + (" (flagged unstable)" if flagged else ""))
