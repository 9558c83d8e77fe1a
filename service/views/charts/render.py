"""Turning a chart into SVG or PNG bytes, with no pyplot and no GUI backend involved."""

from __future__ import annotations

import io
import threading
from typing import Literal

import matplotlib
from matplotlib.figure import Figure

from service.views.charts.style import RC

Format = Literal["svg", "png"]
PNG_DPI = 150
# No creation date or software stamp: the same chart always renders to the same bytes.
_METADATA = {"svg": {"Date": None, "Creator": None}, "png": {"Software": None}}
#: Held while a page's charts are drawn: matplotlib's rc settings are global to the process,
#: so two threads drawing at once could mix their styles.
DRAWING = threading.Lock()


def render(fig: Figure, fmt: Format) -> bytes:
    """The figure as SVG (text kept as text) or PNG (150 dpi) bytes."""
    if fmt not in _METADATA:
        raise ValueError(f"chart format must be 'svg' or 'png', got {fmt!r}")
    buffer = io.BytesIO()
    with matplotlib.rc_context(RC):
        _settle_layout(fig)
        fig.savefig(buffer, format=fmt, dpi=PNG_DPI, metadata=_METADATA[fmt])
    return buffer.getvalue()


def _settle_layout(fig: Figure) -> None:
    """Run the constrained layout once and keep it: each further pass moves the axes by a
    few hundredths of a point, which would make the same chart render to other bytes."""
    if fig.get_layout_engine() is not None:
        fig.draw_without_rendering()
        fig.set_layout_engine("none")
