"""Warnings and failed folds of one series: every failure with its reason, and each distinct
warning with the number of folds that raised it."""

from __future__ import annotations

from collections import Counter

from backtest.results import SeriesResult
from service.views.report.html import Html, element, join, table


def problems_section(sr: SeriesResult) -> Html:
    """Failed-fold table and warning counts, or a line saying there were none."""
    labels = {c.candidate_id: c.label for c in sr.candidates}
    failed = sorted((f for f in sr.folds if f.status != "ok"),
                    key=lambda f: (f.candidate_id, f.fold))
    warned = Counter((f.candidate_id, w) for f in sr.folds for w in f.warnings)
    parts: list[object] = [element("h3", "Warnings and failed folds")]
    if failed:
        parts.append(table(["candidate", "fold", "origin", "reason"],
                           [(labels.get(f.candidate_id, f.candidate_id), f.fold, f.origin,
                             f.reason or "not recorded") for f in failed], numeric=(1,)))
    else:
        parts.append(element("p", "No fold failed."))
    if warned:
        parts.append(table(["candidate", "warning", "folds"],
                           [(labels.get(cid, cid), text, count)
                            for (cid, text), count in sorted(warned.items())], numeric=(2,)))
    else:
        parts.append(element("p", "No fold raised a warning."))
    return join(parts)
