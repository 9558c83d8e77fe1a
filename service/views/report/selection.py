"""Which candidates get charts of their own: drawing every chart of every candidate is most
of a report's rendering time, so per-candidate charts are kept for the few that matter."""

from __future__ import annotations

from backtest.results import SeriesResult

#: Best-ranked candidates whose calibration, residual and parameter charts are drawn.
CHARTED_TOP = 3


def charted_candidates(sr: SeriesResult) -> frozenset[str]:
    """Ids of the :data:`CHARTED_TOP` best-ranked candidates and of the benchmark."""
    ranked = sorted(((r.rank, r.candidate_id) for r in sr.ranking if r.rank is not None),
                    key=lambda ranked_id: ranked_id[0])
    return frozenset([sr.benchmark_id, *(cid for _, cid in ranked[:CHARTED_TOP])])


def charted_note(sr: SeriesResult) -> str:
    """What the report says about the charts it left out (empty if none were)."""
    if len(sr.candidates) <= len(charted_candidates(sr)):
        return ""
    return (f"Charts per candidate are drawn for the {CHARTED_TOP} best-ranked candidates and "
            "the benchmark; the tables cover every candidate.")
