"""Ranking candidates on one series by a chosen score and horizon, on common ground.

Lower is better for every rankable score. Candidates whose score over their own completed
folds is undefined are listed last, unranked; the others are *ranked candidates*. When a
ranked candidate failed at some origins, averages over each candidate's own folds would
compare different origins, so the ranking score is recomputed over the origins every
ranked candidate completed (``common_folds`` of them), and the candidate's own-folds
figure is kept beside it (``score_own_folds``). With no failed folds the two are equal.
If no origin was completed by every ranked candidate, nobody is ranked.

``ratio_to_benchmark`` is the candidate's ranking score divided by the benchmark's, both
on the common origins: a relative measure in the sense of Hyndman & Koehler (2006), e.g.
relative MASE; lower is better, below 1 beats the benchmark. It is not a skill score; the
usual skill score (Murphy 1988) is 1 - ratio, where higher is better.
``score_count`` of ``score_possible`` points (folds, for a per-fold mean) carry the
ranking score; the rest had no defined scale. Ties are broken by label, then id, so the
order never depends on input order.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

from backtest.results import CandidateInfo, FoldResult, RankRow, Score
from backtest.score_registry import FOLD_COUNTED
from backtest.scoring import score_candidate

Rescore = Callable[[str, list[FoldResult]], list[Score]]


def rank_candidates(candidates: Sequence[CandidateInfo], scores: Sequence[Score],
                    folds: Sequence[FoldResult], benchmark_id: str, rank_by: str,
                    rank_horizon: int | None, horizon: int,
                    rescore: Rescore | None = None) -> tuple[RankRow, ...]:
    """Rank ``candidates`` by ``rank_by`` at ``rank_horizon`` (``None``: pooled over the
    plan's ``horizon`` steps) on the origins every ranked candidate completed.

    ``rescore(candidate_id, folds)`` scores a candidate on a subset of its folds the way
    its own scores were computed (levels, filled periods, predictive form); by default
    with point scores alone."""
    own = {s.candidate_id: s for s in scores
           if s.metric == rank_by and s.horizon == rank_horizon and s.level is None}
    done = {c.candidate_id: {f.fold for f in folds
                             if f.candidate_id == c.candidate_id and f.status == "ok"}
            for c in candidates}
    ranked = [c.candidate_id for c in candidates
              if own.get(c.candidate_id) is not None and own[c.candidate_id].value is not None]
    common = set.intersection(*(done[cid] for cid in ranked)) if ranked else set()
    rescore = rescore or (lambda cid, subset: score_candidate(cid, subset, horizon, ()))
    common_score = {cid: _on_common(cid, own[cid], folds, common, done[cid], rank_by,
                                    rank_horizon, rescore) for cid in ranked}
    value = {cid: s.value for cid, s in common_score.items()}
    reference = value.get(benchmark_id)
    ordered = sorted(candidates, key=lambda c: (value.get(c.candidate_id) is None,
                                                value.get(c.candidate_id) or 0.0,
                                                c.label, c.candidate_id))
    width = 1 if rank_by in FOLD_COUNTED or rank_horizon is not None else horizon
    rows = []
    for position, c in enumerate(ordered, start=1):
        cid = c.candidate_id
        score = value.get(cid)
        all_own = [f for f in folds if f.candidate_id == cid]
        ok = len(done[cid])
        ratio = score / reference if score is not None and reference else None
        on_common = common_score.get(cid)
        rows.append(RankRow(
            position if score is not None else None, cid, c.label, score, ratio,
            cid == benchmark_id, ok, len(all_own) - ok,
            folds_not_converged=sum(f.status == "ok" and f.converged is False
                                    for f in all_own),
            score_own_folds=own[cid].value if cid in own else None,
            common_folds=len(common) if ranked else None,
            score_count=None if on_common is None else on_common.count,
            score_possible=None if on_common is None else len(common) * width))
    return tuple(rows)


def _on_common(cid: str, own: Score, folds: Sequence[FoldResult], common: set[int],
               done: set[int], rank_by: str, rank_horizon: int | None,
               rescore: Rescore) -> Score:
    """The candidate's ranking score over the common origins (its own score when those are
    all its completed folds)."""
    if common == done:
        return own
    subset = [f for f in folds if f.candidate_id == cid and f.fold in common]
    return next(s for s in rescore(cid, subset)
                if s.metric == rank_by and s.horizon == rank_horizon and s.level is None)
