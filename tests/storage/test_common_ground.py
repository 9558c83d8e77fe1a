"""The ranking's common ground survives storage: own-folds figure and common origins."""

from __future__ import annotations

from dataclasses import replace

from sqlalchemy.orm import Session

from backtest.engine import run_backtest
from backtest.ranking import rank_candidates
from backtest.scoring import score_candidate
from storage.results import load_series_result, rank_table, write_series_result
from storage.runs import finish_run, queue_run, start_run
from storage.series import save_series_version
from tests.storage.builders import ACTOR, benchmark_candidates, monthly_series, small_plan


def _with_failed_fold(result, plan: dict, candidate_id: str, fold: int):
    """The series result as if ``candidate_id`` had failed at ``fold``: folds, scores and
    ranking recomputed by the engine's own functions."""
    folds = tuple(replace(f, status="failed", reason="injected", point=None, lower={},
                          upper={}, params=None, scale=None, scale_sq=None)
                  if (f.candidate_id, f.fold) == (candidate_id, fold) else f
                  for f in result.folds)
    scores = tuple(s for c in result.candidates for s in score_candidate(
        c.candidate_id, [f for f in folds if f.candidate_id == c.candidate_id],
        plan["horizon"], plan["levels"]))
    ranking = rank_candidates(result.candidates, scores, folds, result.benchmark_id,
                              plan["rank_by"], plan["rank_horizon"], plan["horizon"])
    return replace(result, folds=folds, scores=scores, ranking=ranking)


def test_rank_rows_keep_common_origins_and_own_fold_scores(session: Session):
    series = monthly_series("sales/east", seed=3)
    plan = small_plan()
    candidates = benchmark_candidates()
    version = save_series_version(session, series, actor=ACTOR).version.id
    run = queue_run(session, series_version_ids=[version], candidates=candidates, plan=plan,
                    actor=ACTOR)
    start_run(session, run.id, actor="worker-1")
    result = run_backtest([series], list(candidates), plan)
    fragile = candidates[0].id
    sr = _with_failed_fold(result.series[0], result.plan, fragile, 0)
    write_series_result(session, run.id, version, sr, actor="worker-1")
    finish_run(session, run.id, actor="worker-1", software=result.software,
               timing=result.timing)

    rows = {r["candidate_id"]: r for r in rank_table(session, run.id)}
    assert {r["common_folds"] for r in rows.values()} == {2}
    other = next(cid for cid in rows if cid != fragile)
    own = {s.candidate_id: s.value for s in sr.scores
           if s.metric == "mase" and s.horizon is None and s.level is None}
    assert rows[other]["score_own_folds"] == own[other]
    assert rows[other]["score"] != rows[other]["score_own_folds"]  # 2 of its 3 origins
    assert rows[fragile]["score"] == rows[fragile]["score_own_folds"] == own[fragile]
    assert rows[other]["score_count"] == rows[other]["score_possible"] == 2 * 4
    assert load_series_result(session, run.id, version).ranking == sr.ranking
