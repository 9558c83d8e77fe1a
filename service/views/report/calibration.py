"""Calibration verdicts of one series: per candidate and level, the h = 1 tests and zone, the
pooled coverage, and a calibration chart per charted candidate."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from backtest.results import SeriesResult
from service.views.charts import calibration_chart
from service.views.report.embed import ChartEmbedder
from service.views.report.html import Html, element, join, table
from service.views.report.numbers import MISSING, p_value, share
from service.views.report.selection import charted_note


def calibration_section(sr: SeriesResult, charts: ChartEmbedder,
                        charted: frozenset[str]) -> Html:
    """Verdict table for every candidate; a chart for each ``charted`` one with calibration
    evidence."""
    evidence = sr.evidence.get("calibration", {})
    rows = []
    for c in sr.candidates:
        for level in evidence.get(c.candidate_id) or ():
            first = level["by_horizon"][0] if level["by_horizon"] else None
            pooled = level.get("pooled") or {}
            rows.append(_row(c.label, level["level"], first, pooled))
    parts: list[object] = [
        element("h3", "Interval calibration"),
        element("p", "At h = 1 successive origins do not share forecast errors, so the tests "
                     "are formal there (when origins are one period apart); the pooled "
                     "coverage over all horizons is descriptive. Zones: 'consistent', "
                     "'suspect' (misses at or beyond the 95 % point of the binomial "
                     "distribution) or 'excessive' (beyond its 99.99 % point). Kupiec's "
                     "p-value is exact (the binomial distribution of its LR statistic), "
                     "as in the forecast ledger.", cls="note"),
        table(["candidate", "level", "h = 1 hits / trials", "h = 1 coverage",
               "Kupiec p (exact)",
               "Christoffersen p (cond. coverage)", "zone", "pooled coverage"], rows,
              numeric=(1, 2, 3, 4, 5, 7)),
    ]
    if charted_note(sr):
        parts.append(element("p", charted_note(sr), cls="note"))
    for c in sr.candidates:
        if c.candidate_id in charted and evidence.get(c.candidate_id):
            parts.append(charts.embed(
                calibration_chart(sr, c.candidate_id),
                f"{c.label}: share of actuals inside each interval by horizon (line) against "
                "the nominal level (dotted); the band is where 95 % of observed coverages "
                "would fall if the intervals were calibrated and misses independent (at "
                "h > 1 they overlap, so it is only a guide). Below: the origins whose "
                "one-step actual fell outside."))
    return join(parts)


def _row(label: str, level: int, first: Mapping[str, Any] | None,
         pooled: Mapping[str, Any]) -> tuple[str, ...]:
    if first is None:
        return (label, f"{level} %", MISSING, MISSING, MISSING, MISSING, MISSING,
                share(pooled.get("coverage")))
    kupiec = first.get("kupiec") or {}
    christoffersen = first.get("christoffersen") or {}
    zone = first.get("zone") or MISSING
    if first.get("formal") is False:
        zone += " (descriptive)"
    return (label, f"{level} %", f"{first['hits']} / {first['trials']}",
            share(first.get("coverage")), p_value(kupiec.get("p_value")),
            p_value(christoffersen.get("p_value_cc")), zone, share(pooled.get("coverage")))
