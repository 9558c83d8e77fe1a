"""The CLI ranking table shows the common ground, the own-folds figure and minority counts."""

from __future__ import annotations

from dataclasses import asdict

from backtest.ranking import rank_candidates
from backtest.scoring import score_candidate
from service.cli.terminal import ranking_table
from tests.backtest.test_ranking import FOLDS, INFOS, SCORES, _fold


def _table(infos, scores, folds, metric):
    rows = [{**asdict(r), "candidate": r.label}
            for r in rank_candidates(infos, scores, folds, "bench", metric, None, 1)]
    return ranking_table("s", rows, metric.upper()).splitlines()


def test_the_table_names_the_common_origins_and_shows_own_fold_figures():
    lines = _table(INFOS, SCORES, FOLDS, "mae")
    assert lines[0] == "s; scores on the 2 origins every ranked candidate completed"
    assert "own folds" in lines[1]
    steady = next(line for line in lines if "steady" in line)
    assert "1.500" in steady and "2.750" in steady  # common origins, own folds


def test_a_score_on_a_minority_of_its_points_shows_the_count():
    folds = [_fold("bench", i, 1.0, None if i < 3 else 1.0) for i in range(4)]
    lines = _table(INFOS[:1], score_candidate("bench", folds, 1, ()), folds, "mase")
    assert "1.000 (1 of 4 points)" in lines[2]
    assert lines[0] == "s"
