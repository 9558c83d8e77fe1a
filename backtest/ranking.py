"""Ranking candidates on one series by a chosen score and horizon, on common ground.

Lower is better for every rankable score. Candidates whose score over their own completed
folds is undefined are listed last, unranked; the others are *ranked candidates*. When a
ranked candidate failed at some origins, averages over each candidate's own folds would
compare different origins, so the ranking score is recomputed over the origins every
ranked candidate completed (``common_folds`` of them), and the candidate's own-folds
figure is kept beside it (``score_own_folds``). With no failed folds the two are equal.
If no origin was completed by every ranked candidate, nobody is ranked.

:func:`on_common_ground` computes that ground for every score a series has (each metric,
horizon and level, with the candidates that have it defined), so that a ranking by any
stored score (the BI ranking) compares candidates on the same origins as the run's own
ranking; :func:`rank_candidates` reads the plan's score from it.

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
ScoreKey = tuple[str, int | None, int | None]
"""A score's metric, horizon (``None``: pooled) and level (``None``: no level)."""


def on_common_ground(candidates: Sequence[CandidateInfo], scores: Sequence[Score],
                     folds: Sequence[FoldResult], horizon: int,
                     rescore: Rescore | None = None) -> tuple[Score, ...]:
    """``scores`` with their ``common_*`` fields filled in.

    For each score key, the common ground is the origins completed by every candidate whose
    own value of that score is defined. A candidate that completed exactly those origins,
    or whose own value is undefined, keeps its own figures; the others are rescored on the
    common origins with ``rescore(candidate_id, folds)``, which must score a subset of a
    candidate's folds the way its own scores were computed (levels, filled periods,
    predictive form; by default point scores alone over ``horizon`` steps)."""
    rescore = rescore or (lambda cid, subset: score_candidate(cid, subset, horizon, ()))
    done = {c.candidate_id: frozenset(f.fold for f in folds
                                      if f.candidate_id == c.candidate_id and f.status == "ok")
            for c in candidates}
    defined: dict[ScoreKey, list[str]] = {}
    for score in scores:
        if score.value is not None:
            defined.setdefault(_key(score), []).append(score.candidate_id)
    common = {key: frozenset.intersection(*(done[cid] for cid in ids))
              for key, ids in defined.items()}
    rescored: dict[tuple[str, frozenset[int]], dict[ScoreKey, Score]] = {}
    out = []
    for score in scores:
        ground = common.get(_key(score))
        figure = score
        if ground is not None and score.value is not None and ground != done[score.candidate_id]:
            cid = score.candidate_id
            if (cid, ground) not in rescored:
                subset = [f for f in folds if f.candidate_id == cid and f.fold in ground]
                rescored[cid, ground] = {_key(s): s for s in rescore(cid, subset)}
            figure = rescored[cid, ground][_key(score)]
        # Built directly rather than with dataclasses.replace, whose generic field walk
        # was a tenth of the main process's CPU per series (thousands of scores).
        out.append(Score(score.candidate_id, score.horizon, score.metric, score.level,
                         score.value, score.count, score.note, figure.value, figure.count,
                         figure.note, None if ground is None else len(ground)))
    return tuple(out)


def rank_candidates(candidates: Sequence[CandidateInfo], scores: Sequence[Score],
                    folds: Sequence[FoldResult], benchmark_id: str, rank_by: str,
                    rank_horizon: int | None, horizon: int,
                    rescore: Rescore | None = None) -> tuple[RankRow, ...]:
    """Rank ``candidates`` by ``rank_by`` at ``rank_horizon`` (``None``: pooled over the
    plan's ``horizon`` steps) on the origins every ranked candidate completed.

    The common-ground figures are read from ``scores`` when :func:`on_common_ground` filled
    them in, else computed here with ``rescore`` (see there)."""
    chosen = [s for s in scores if _key(s) == (rank_by, rank_horizon, None)]
    if any(s.common_count is None for s in chosen):
        chosen = list(on_common_ground(candidates, chosen, folds, horizon, rescore))
    own = {s.candidate_id: s for s in chosen}
    ranked = [c.candidate_id for c in candidates
              if own.get(c.candidate_id) is not None and own[c.candidate_id].value is not None]
    common_folds = own[ranked[0]].common_folds if ranked else None
    value = {cid: own[cid].common_value for cid in ranked}
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
        ok = sum(f.status == "ok" for f in all_own)
        ratio = score / reference if score is not None and reference else None
        on_common = own[cid] if cid in ranked else None
        rows.append(RankRow(
            position if score is not None else None, cid, c.label, score, ratio,
            cid == benchmark_id, ok, len(all_own) - ok,
            folds_not_converged=sum(f.status == "ok" and f.converged is False
                                    for f in all_own),
            score_own_folds=own[cid].value if cid in own else None,
            common_folds=common_folds,
            score_count=None if on_common is None else on_common.common_count,
            score_possible=None if on_common is None or common_folds is None
            else common_folds * width))
    return tuple(rows)


def _key(score: Score) -> ScoreKey:
    return score.metric, score.horizon, score.level
