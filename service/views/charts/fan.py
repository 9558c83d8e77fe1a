"""Forecast fan chart: recent history, a point forecast, its central bands and the actuals."""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from matplotlib.figure import Figure

from backtest.results import FoldResult
from service.views.charts.style import (
    BLACK,
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

#: Foldline's fan look: one neutral fill under the widest band, every band outlined
#: (inner bands solid, wider ones dashed) and named at the right edge; the point forecast
#: in its own colour, history in dark grey, actuals as open black circles.
FAN_FILL = "#E9E6E1"
BAND_EDGE = "#5A5A5A"
HISTORY_COLOR = "#4D4D4D"
POINT_COLOR = VERMILLION
_EDGE_DASHES: tuple[tuple[float, ...], ...] = ((), (5, 2.5), (1.5, 1.5))
#: History shown before a forecast by default, in multiples of its horizon (at least one
#: season), so a short forecast is not squeezed against the right edge of a long history.
HISTORY_PER_STEP = 4


def history_window(horizon: int, season_length: int) -> int:
    """Periods of history a fan chart shows by default: proportional to the horizon, at
    least one whole season (and two periods)."""
    return max(HISTORY_PER_STEP * horizon, season_length, 2)


def recent_history(periods: Sequence[str], values: Iterable[float], origin: str,
                   shown: int) -> tuple[list[str], list[float]]:
    """The last ``shown`` periods up to and including ``origin`` (0: all of them), with the
    observations after it, which :func:`fan_chart` leaves to the actuals."""
    labels = list(periods)
    start = max(0, labels.index(origin) + 1 - shown) if shown else 0
    return labels[start:], list(values)[start:]


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
    """History up to the origin, the point forecast, every band outlined and named at the
    right edge, and the actuals.

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
    levels = sorted(forecast.lower)
    if levels:
        widest = levels[-1]
        ax.fill_between(ahead_x, forecast.lower[widest], forecast.upper[widest],
                        color=FAN_FILL, linewidth=0, label="_fan")
    for dashes, level in zip(_EDGE_DASHES, levels):
        style = (0, dashes) if dashes else "solid"
        ax.fill_between(ahead_x, forecast.lower[level], forecast.upper[level],
                        facecolor="none", edgecolor=BAND_EDGE, linestyle=style,
                        linewidth=1.0, label=f"{level} % interval")
        for side, bound, va in (("upper", forecast.upper[level], "bottom"),
                                ("lower", forecast.lower[level], "top")):
            ax.annotate(f"{level} %", (ahead_x[-1], bound[-1]), xytext=(4, 0),
                        textcoords="offset points", ha="left", va=va, fontsize=7.5,
                        color=BAND_EDGE, gid=f"level-label-{level}-{side}"
                        ).set_in_layout(False)  # inside the axes: keeps the layout stable
    ax.plot(history_x, np.asarray(history_values, dtype=float)[:cut], color=HISTORY_COLOR,
            linewidth=1.3, label="history")
    ax.plot(ahead_x, forecast.point, color=POINT_COLOR, linewidth=2.0, marker="D",
            markersize=3.5, label="point forecast")
    actuals = np.array([np.nan if a is None else a for a in forecast.actuals], dtype=float)
    if np.isfinite(actuals).any():
        ax.plot(ahead_x[:len(actuals)], actuals, color=BLACK, marker="o", markerfacecolor="white",
                linestyle=(0, (1, 1.5)), linewidth=1.0, label="actual")
    # room on the right for the level labels
    ax.set_xlim(-0.5, ahead_x[-1] + max(1.5, 0.08 * (ahead_x[-1] + 1)))
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
