"""Charts as inline SVG inside the report page.

matplotlib writes a standalone SVG document; inline in HTML it needs no XML prolog,
namespace declarations or RDF metadata (which would be the page's only ``http`` strings),
and its element ids must be unique across the page, so each chart's ids get a prefix.
"""

from __future__ import annotations

import re

from matplotlib.figure import Figure

from service.views.charts import render
from service.views.report.html import Html, esc

_ID = re.compile(r'\bid="([^"]+)"')
_REFERENCE = re.compile(r'(href="#|url\(#)([^")]+)')
_METADATA = re.compile(r"<metadata>.*?</metadata>\s*", re.DOTALL)
_NAMESPACES = re.compile(r'\s+xmlns(?::\w+)?="[^"]*"')


def inline_svg(svg: str, prefix: str, label: str) -> str:
    """A standalone SVG document as an ``<svg>`` element for an HTML page."""
    body = svg[svg.index("<svg"):]
    body = _NAMESPACES.sub("", _METADATA.sub("", body))
    body = _ID.sub(lambda m: f'id="{prefix}{m.group(1)}"', body)
    body = _REFERENCE.sub(lambda m: f"{m.group(1)}{prefix}{m.group(2)}", body)
    return body.replace("<svg", f'<svg role="img" aria-label="{esc(label)}"', 1)


class ChartEmbedder:
    """Embeds figures one after another, numbering them so their ids never collide."""

    def __init__(self) -> None:
        self.count = 0

    def embed(self, fig: Figure, caption: str) -> Html:
        """The figure as ``<figure>`` with inline SVG and a caption."""
        self.count += 1
        title = fig.get_suptitle().replace("\n", " ")
        svg = inline_svg(render(fig, "svg").decode(), f"chart{self.count}-", title)
        return Html(f'<figure class="chart">\n{svg}\n<figcaption>{esc(caption)}</figcaption>\n'
                    "</figure>")
