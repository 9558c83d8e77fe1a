"""Tiny HTML building blocks: escaping, elements and tables. Everything passed in is escaped
unless it is :class:`Html`, so stored text (labels, warnings, reasons) cannot inject markup."""

from __future__ import annotations

import html
from collections.abc import Iterable, Sequence


class Html(str):
    """Text that is already HTML and must not be escaped again."""


def esc(value: object) -> Html:
    """``value`` as HTML text: :class:`Html` as it is, anything else escaped."""
    return value if isinstance(value, Html) else Html(html.escape(str(value), quote=True))


def element(tag: str, *children: object, cls: str | None = None) -> Html:
    """``<tag class="cls">children</tag>`` with each child escaped unless :class:`Html`."""
    attributes = f' class="{esc(cls)}"' if cls else ""
    return Html(f"<{tag}{attributes}>{''.join(esc(c) for c in children)}</{tag}>")


def join(parts: Iterable[object]) -> Html:
    """Escaped parts, one per line."""
    return Html("\n".join(esc(p) for p in parts))


def table(header: Sequence[object] | None, rows: Iterable[Sequence[object]], *,
          numeric: Sequence[int] = (), cls: str | None = None) -> Html:
    """A table (``header`` ``None``: rows only); columns whose index is in ``numeric`` are
    right-aligned."""
    def row(cells: Sequence[object], tag: str) -> str:
        return "<tr>" + "".join(
            f'<{tag} class="num">{esc(c)}</{tag}>' if i in numeric else f"<{tag}>{esc(c)}</{tag}>"
            for i, c in enumerate(cells)) + "</tr>"

    body = "\n".join(row(r, "td") for r in rows)
    attributes = f' class="{esc(cls)}"' if cls else ""
    head = "" if header is None else f"<thead>{row(header, 'th')}</thead>\n"
    return Html(f"<table{attributes}>\n{head}<tbody>\n{body}\n</tbody>\n</table>")


def link(href: str, *children: object) -> Html:
    """``<a href="href">children</a>``, the address escaped like the text."""
    return Html(f'<a href="{esc(href)}">{"".join(esc(c) for c in children)}</a>')
