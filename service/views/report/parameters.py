"""How a fitted parameter is named in tables: Foldline's readable name, then the wrapped
library's own name in small type, so a value can be traced to the library's output."""

from __future__ import annotations

from backtest.parameter_names import readable
from service.views.report.html import Html, element, esc


def parameter_cell(name: str, period: int | None) -> Html:
    """``MA 1`` followed by ``ma.L1`` in the muted monospace of library names."""
    shown = readable(name, period)
    if shown == name:
        return element("span", name, cls="mono")
    return Html(f"{esc(shown)} {element('span', name, cls='mono lib')}")

