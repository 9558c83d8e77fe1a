"""The BI ranking's SQL (:mod:`storage.results.ranking`) against the result objects the engine
returned: the stored scores ranked, and the engine's own ranking (:mod:`backtest.ranking`)
reproduced on the plan's score."""

from __future__ import annotations

import pytest
from sqlalchemy.orm import Session

from storage.results import ranking_table
from tests.storage.builders import monthly_series, run_and_store, small_plan


@pytest.fixture
def history(session: Session) -> dict:
    """North: run 1 on version 1, run 2 on version 2 (more data); south: run 1 only."""
    first = run_and_store(session, [monthly_series("north", 40, seed=1),
                                    monthly_series("south", 40, seed=2)])
    second = run_and_store(session, [monthly_series("north", 44, seed=1)])
    return {"first": first, "second": second}


@pytest.mark.parametrize(("metric", "horizon", "level"), [("mase", None, None),
                                                          ("rmse", 2, None),
                                                          ("coverage", 1, 80)])
def test_candidates_ranked_by_a_chosen_score(session: Session, history: dict, metric: str,
                                             horizon: int | None, level: int | None):
    _, _, result = history["second"]
    expected = sorted((s.value, s.candidate_id) for s in result.series[0].scores
                      if (s.metric, s.horizon, s.level) == (metric, horizon, level))

    ranked = ranking_table(session, metric=metric, horizon=horizon, level=level,
                           prefix="north")

    assert [(r["value"], r["candidate_id"]) for r in ranked] == expected
    assert [r["rank"] for r in ranked] == [1 + sum(v < value for v, _ in expected)
                                           for value, _ in expected]
    labels = {c.candidate_id: c.label for c in result.series[0].candidates}
    assert all(r["candidate"] == labels[r["candidate_id"]] for r in ranked)


@pytest.mark.parametrize("plan", [{}, {"rank_by": "rmse", "rank_horizon": 2},
                                  {"rank_by": "rmsse_fold_mean"}, {"rank_by": "crps"}])
def test_the_sql_ranking_agrees_with_the_engines_ranking(session: Session, plan: dict):
    """Where every candidate completed every fold the engine ranks each on its own stored
    score, so the two must give the same order, ranks and values (no ties here: the engine
    breaks a tie by label, the SQL shares the rank)."""
    plan_ = small_plan(**plan)
    _, _, result = run_and_store(session, [monthly_series("north", 40, seed=1),
                                           monthly_series("south", 40, seed=2)], plan=plan_)
    table = ranking_table(session, metric=plan_.rank_by, horizon=plan_.rank_horizon)

    for unit in result.series:
        assert all(f.status == "ok" for f in unit.folds)
        engine = [(r.rank, r.candidate_id, r.score) for r in unit.ranking]
        sql = [(r["rank"], r["candidate_id"], r["value"]) for r in table
               if r["series_key"] == unit.series["key"]]
        assert len({score for _, _, score in engine}) == len(engine)
        assert sql == engine
