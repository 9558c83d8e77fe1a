"""One series' distribution scores: how good each candidate's whole predictive distribution
was, beside its point accuracy in the ranking."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from backtest.results import Score, SeriesResult
from backtest.score_registry import DISTRIBUTION_METRICS
from service.views.report.html import Html, element, join, table
from service.views.report.numbers import MISSING, fixed


def distribution_section(sr: SeriesResult) -> Html:
    """Pooled CRPS, pinball and scaled pinball loss per candidate, in ranking order."""
    pooled = {(s.candidate_id, s.metric): s for s in sr.scores
              if s.horizon is None and s.level is None and s.metric in DISTRIBUTION_METRICS}
    specs = {c.candidate_id: c.spec for c in sr.candidates}
    rows = []
    for r in sr.ranking:
        crps = pooled.get((r.candidate_id, "crps"))
        rows.append((r.label, _intervals(specs.get(r.candidate_id, {})),
                     *(fixed(_value(pooled, r.candidate_id, m)) for m in DISTRIBUTION_METRICS),
                     (crps.note if crps is not None and crps.note else MISSING)))
    return join([
        element("h3", "Whole predictive distribution"),
        element("p", "Lower is better for each. CRPS in the series' units (Gneiting & "
                     "Raftery 2007): for a log or Box-Cox model it is that of the "
                     "back-transformed, skewed distribution; for empirical intervals that "
                     "of the past errors around the point forecast. Pinball loss averaged "
                     "over the quantiles the interval bounds give; scaled by each fold's "
                     "MASE scale.", cls="note"),
        table(["candidate", "intervals", "CRPS", "pinball loss", "scaled pinball loss",
               "note"], rows, numeric=(2, 3, 4), cls="distribution"),
    ])


def _value(pooled: Mapping[tuple[str, str], Score], candidate_id: str,
           metric: str) -> float | None:
    score = pooled.get((candidate_id, metric))
    return None if score is None else score.value


def _intervals(spec: Mapping[str, Any]) -> str:
    option = spec.get("intervals")
    if not option:
        return "the model's"
    return f"empirical ({option['errors']} errors, at least {option['min_errors']})"
