"""Foldline's chart look: palette, line looks, fonts, figure sizes and axis wording.

Colours come from the palette of Okabe & Ito (2008), *Color Universal Design* (J*FLY),
built to stay distinguishable under the common colour-vision deficiencies. Its yellow is
left out (too faint on white). Colour is never the only cue: every candidate also has its
own marker and dash pattern, so lines stay apart in grey print too.
"""

from __future__ import annotations

import functools
import math
import textwrap
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from typing import Any, ParamSpec

import matplotlib
from matplotlib.artist import Artist
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from matplotlib.typing import RcKeyType

BLACK = "#000000"
ORANGE = "#E69F00"
SKY_BLUE = "#56B4E9"
GREEN = "#009E73"
BLUE = "#0072B2"
VERMILLION = "#D55E00"
PURPLE = "#CC79A7"
GREY = "#8C8C8C"

#: Printable width of an A4 page with 20 mm margins, in inches.
WIDTH_IN = 6.7
#: Characters of the bold 10.5-point title that fit across WIDTH_IN.
_TITLE_CHARACTERS = 76

RC: dict[RcKeyType, Any] = {
    "font.family": "sans-serif",
    "font.size": 9,
    "axes.titlesize": 9,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.labelsize": 9,
    "axes.edgecolor": "#4D4D4D",
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "axes.grid.axis": "y",
    "axes.axisbelow": True,
    "grid.color": "#DEDEDE",
    "grid.linewidth": 0.6,
    "xtick.labelsize": 8,
    "ytick.labelsize": 8,
    "legend.fontsize": 8,
    "legend.frameon": False,
    "lines.linewidth": 1.5,
    "lines.markersize": 4.5,
    "figure.facecolor": "white",
    "figure.titlesize": 10.5,
    "figure.titleweight": "bold",
    # Text stays text in SVG (searchable, small); ids are stable from run to run.
    "svg.fonttype": "none",
    "svg.hashsalt": "foldline",
}


@dataclass(frozen=True)
class Look:
    """How one line is drawn: colour, marker and dash pattern."""

    color: str
    marker: str
    dashes: tuple[float, ...] = ()
    width: float = 1.5

    def plot_kwargs(self) -> dict[str, Any]:
        """Keyword arguments for :meth:`Axes.plot`."""
        style: Any = (0, self.dashes) if self.dashes else "solid"
        return {"color": self.color, "marker": self.marker, "linestyle": style,
                "linewidth": self.width}


CANDIDATE_LOOKS = (
    Look(BLUE, "o"),
    Look(VERMILLION, "s", (5, 2)),
    Look(GREEN, "^", (1.5, 1.5)),
    Look(PURPLE, "D", (6, 2, 1.5, 2)),
    Look(ORANGE, "v", (3, 1.5)),
    Look(SKY_BLUE, "P", (8, 2)),
)
BENCHMARK_LOOK = Look(BLACK, "X", (7, 3), width=2.2)

#: Plural noun of one step for each frequency, for axis labels.
_STEP_WORDS = {"P1D": "days", "P7D": "weeks", "P1W": "weeks", "P1M": "months",
               "P3M": "quarters", "P12M": "years", "P1Y": "years"}

P = ParamSpec("P")


def candidate_looks(candidate_ids: Sequence[str], benchmark_id: str) -> dict[str, Look]:
    """A look per candidate, by position in the run, so a candidate looks the same in every
    chart of a series; the benchmark always gets the benchmark look."""
    others = [c for c in candidate_ids if c != benchmark_id]
    looks = {c: CANDIDATE_LOOKS[i % len(CANDIDATE_LOOKS)] for i, c in enumerate(others)}
    return {**looks, benchmark_id: BENCHMARK_LOOK}


def styled(draw: Callable[P, Figure]) -> Callable[P, Figure]:
    """Run a chart function under Foldline's rc settings (read when artists are made)."""

    @functools.wraps(draw)
    def wrapper(*args: P.args, **kwargs: P.kwargs) -> Figure:
        with matplotlib.rc_context(RC):
            return draw(*args, **kwargs)

    return wrapper


def new_figure(height_in: float) -> Figure:
    """An A4-width figure with constrained layout."""
    return Figure(figsize=(WIDTH_IN, height_in), layout="constrained")


def set_title(fig: Figure, text: str) -> None:
    """The chart's title, left-aligned above all panels, wrapped to the figure's width."""
    fig.suptitle(textwrap.fill(text, _TITLE_CHARACTERS), x=0.01, ha="left")


def step_word(frequency: str | None) -> str:
    """``months``, ``quarters``, ...: what one step of the series is called."""
    return _STEP_WORDS.get(frequency or "", "periods")


def period_axis_label(frequency: str | None) -> str:
    """Label of a time axis whose ticks are period labels."""
    word = step_word(frequency)
    return "period" if word == "periods" else f"period ({word[:-1]})"


def value_axis_label(unit: str | None) -> str:
    """``value (unit)``, saying so when the series' unit was not recorded."""
    return f"value ({unit or 'series units'})"


def add_legend(fig: Figure, ax: Axes, columns: int = 4) -> None:
    """One legend for the chart, centred below the panels, from the labelled artists of
    ``ax``."""
    place_legend(fig, ax.get_legend_handles_labels()[0], columns)


def place_legend(fig: Figure, handles: Sequence[Artist], columns: int = 4) -> None:
    """One legend for the chart, centred below the panels, of these labelled artists."""
    fig.legend(handles=list(handles), loc="outside lower center",
               ncols=min(columns, len(handles)))


#: Calendar strides tried for time-axis ticks, in months (every month ... every 10 years).
_MONTH_STRIDES = (1, 2, 3, 6, 12, 24, 60, 120)


def label_periods(ax: Axes, labels: Sequence[str], positions: Iterable[float], *,
                  max_ticks: int = 8) -> None:
    """Tick a time axis at regular calendar positions (every month, quarter, January,
    second January ...), the finest stride that gives at most ``max_ticks`` ticks.

    A tick goes on the first period of each calendar block of the stride, except a first
    period that starts mid-block; labels that are not ``YYYY``, ``YYYY-Qn``, ``YYYY-MM`` or
    ``YYYY-MM-DD`` (ISO weeks) are thinned to every n-th instead.
    """
    labels, positions = list(labels), list(positions)
    months = [month for label in labels if (month := _month_index(label)) is not None]
    if labels and len(months) == len(labels):
        for stride in _MONTH_STRIDES:
            ticks = [i for i, month in enumerate(months)
                     if (month % stride == 0 if i == 0 else
                         month // stride != months[i - 1] // stride)]
            if 2 <= len(ticks) <= max_ticks:
                ax.set_xticks([positions[i] for i in ticks], [labels[i] for i in ticks])
                return
    every = max(1, math.ceil(len(labels) / max_ticks))
    ax.set_xticks(positions[::every], labels[::every])


def _month_index(label: str) -> int | None:
    """Months since year 0 of a ``YYYY``, ``YYYY-Qn``, ``YYYY-MM`` or ``YYYY-MM-DD`` label
    (days fall into their month, a quarter starts at its first month), else ``None``."""
    parts = label.split("-")
    if len(parts) == 2 and parts[0].isdigit() and parts[1] in ("Q1", "Q2", "Q3", "Q4"):
        return int(parts[0]) * 12 + 3 * (int(parts[1][1]) - 1)
    if not 1 <= len(parts) <= 3 or not all(p.isdigit() for p in parts):
        return None
    month = int(parts[1]) if len(parts) > 1 else 1
    return int(parts[0]) * 12 + month - 1 if 1 <= month <= 12 else None
