"""Ranking candidates on one series by a chosen score and horizon.

Lower is better for every rankable score. ``ratio_to_benchmark`` is the candidate's score
divided by the benchmark's on the same score and horizon, a relative measure in the sense
of Hyndman & Koehler (2006), e.g. relative MASE: lower is better, below 1 beats the
benchmark. It is not a skill score; the usual skill score (Murphy 1988) is 1 - ratio,
where higher is better. Candidates whose score is undefined are listed last, unranked.
Ties are broken by label, then id, so the order never depends on input order.
"""

from __future__ import annotations

from collections.abc import Sequence

from backtest.results import CandidateInfo, FoldResult, RankRow, Score


def rank_candidates(candidates: Sequence[CandidateInfo], scores: Sequence[Score],
                    folds: Sequence[FoldResult], benchmark_id: str, rank_by: str,
                    rank_horizon: int | None) -> tuple[RankRow, ...]:
    """Rank ``candidates`` by ``rank_by`` at ``rank_horizon`` (``None``: pooled)."""
    value = {s.candidate_id: s.value for s in scores
             if s.metric == rank_by and s.horizon == rank_horizon and s.level is None}
    reference = value.get(benchmark_id)
    ordered = sorted(candidates, key=lambda c: (value.get(c.candidate_id) is None,
                                                value.get(c.candidate_id) or 0.0,
                                                c.label, c.candidate_id))
    rows = []
    for position, c in enumerate(ordered, start=1):
        score = value.get(c.candidate_id)
        own = [f for f in folds if f.candidate_id == c.candidate_id]
        ok = sum(f.status == "ok" for f in own)
        ratio = score / reference if score is not None and reference else None
        rows.append(RankRow(position if score is not None else None, c.candidate_id, c.label,
                            score, ratio, c.candidate_id == benchmark_id, ok, len(own) - ok))
    return tuple(rows)
