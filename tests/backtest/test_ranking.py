"""Ranking on common ground: the origins every ranked candidate completed."""

import pytest

from backtest.ranking import rank_candidates
from backtest.results import CandidateInfo, FoldResult
from backtest.scoring import score_candidate


def _fold(cid: str, number: int, error: float | None, scale: float | None = 1.0):
    ok = error is not None
    return FoldResult("s", cid, number, f"o{number}", "t", 12, True,
                      "ok" if ok else "failed", None if ok else "boom", {} if ok else None, (),
                      ("p",), (10.0,), (10.0 - error,) if ok else None, {}, {},
                      scale if ok else None, scale if ok else None)


# Absolute errors per origin 0..3 (None: the fold failed). "fragile" fails at the two hard
# origins 0 and 1, where everyone else errs by 4; on its own folds it looks best.
ERRORS = {"bench": [4.0, 4.0, 2.0, 2.0], "steady": [4.0, 4.0, 1.5, 1.5],
          "fragile": [None, None, 1.0, 1.0]}
INFOS = [CandidateInfo(cid, cid, {}) for cid in ERRORS]
FOLDS = [_fold(cid, i, e) for cid, errors in ERRORS.items() for i, e in enumerate(errors)]
SCORES = [s for cid in ERRORS for s in score_candidate(
    cid, [f for f in FOLDS if f.candidate_id == cid], 1, ())]


def test_candidates_are_ranked_on_the_origins_all_of_them_completed():
    rows = {r.candidate_id: r for r in rank_candidates(INFOS, SCORES, FOLDS, "bench", "mae",
                                                       None, 1)}
    # own folds: bench MAE 3, steady 2.75, fragile 1 -> fragile first; on the common
    # origins 2 and 3: bench 2, steady 1.5, fragile 1 (the same order here, but skill
    # compares like with like: 1 / 2, not 1 / 3)
    assert rows["fragile"].score_own_folds == pytest.approx(1.0)
    assert rows["steady"].score_own_folds == pytest.approx(2.75)
    assert rows["steady"].score == pytest.approx(1.5)
    assert rows["bench"].score == pytest.approx(2.0)
    assert rows["fragile"].ratio_to_benchmark == pytest.approx(0.5)
    assert rows["steady"].ratio_to_benchmark == pytest.approx(0.75)
    assert {r.common_folds for r in rows.values()} == {2}
    assert (rows["fragile"].folds_ok, rows["fragile"].folds_failed) == (2, 2)
    assert rows["steady"].score_count == rows["steady"].score_possible == 2


def test_a_candidate_that_failed_everywhere_does_not_shrink_the_common_ground():
    folds = FOLDS + [_fold("broken", i, None) for i in range(4)]
    infos = [*INFOS, CandidateInfo("broken", "broken", {})]
    scores = SCORES + score_candidate("broken", folds[-4:], 1, ())
    rows = {r.candidate_id: r for r in rank_candidates(infos, scores, folds, "bench", "mae",
                                                       None, 1)}
    assert rows["broken"].rank is None and rows["broken"].score is None
    assert rows["steady"].common_folds == 2


def test_without_failed_folds_the_common_score_is_the_own_score():
    infos, folds = INFOS[:2], [f for f in FOLDS if f.candidate_id != "fragile"]
    scores = [s for s in SCORES if s.candidate_id != "fragile"]
    rows = rank_candidates(infos, scores, folds, "bench", "mase", None, 1)
    assert [r.candidate_id for r in rows] == ["steady", "bench"]
    assert all(r.score == r.score_own_folds and r.common_folds == 4 for r in rows)


def test_a_score_resting_on_a_minority_of_its_points_carries_the_count():
    folds = [_fold("bench", i, 1.0, None if i < 3 else 1.0) for i in range(4)]
    scores = score_candidate("bench", folds, 1, ())
    row = rank_candidates(INFOS[:1], scores, folds, "bench", "mase", None, 1)[0]
    assert (row.score, row.score_count, row.score_possible) == (1.0, 1, 4)


def test_every_score_carries_its_figure_on_common_ground_as_the_ranking_reads_it():
    """The common ground of each score (metric, horizon, level), which the BI ranking
    ranks stored scores on, is the ranking's own: here origins 2 and 3."""
    from backtest.ranking import on_common_ground

    scores = on_common_ground(INFOS, SCORES, FOLDS, 1)
    rows = {r.candidate_id: r for r in rank_candidates(INFOS, SCORES, FOLDS, "bench", "mae",
                                                       None, 1)}
    defined = {(s.metric, s.horizon, s.level) for s in SCORES if s.value is not None}
    for s in scores:  # a score nobody has (here: distribution scores without levels) has none
        assert s.common_folds == (2 if (s.metric, s.horizon, s.level) in defined else None), s
        if s.metric == "mae":
            assert s.common_value == pytest.approx(rows[s.candidate_id].score, rel=1e-15)
            assert s.value == rows[s.candidate_id].score_own_folds
    by = {(s.candidate_id, s.metric, s.horizon): s for s in scores}
    assert by["steady", "mae", None].common_value == 1.5  # origins 2, 3
    assert by["steady", "mae", None].value == 2.75  # all four
    assert by["steady", "rmse", 1].common_value == pytest.approx(1.5)
    fragile = by["fragile", "mae", None]
    assert (fragile.common_value, fragile.common_count) == (fragile.value, fragile.count)
    # read back, the ranking takes the stored figures instead of rescoring
    assert rank_candidates(INFOS, scores, FOLDS, "bench", "mae", None, 1) == tuple(
        rows[r.candidate_id] for r in rank_candidates(INFOS, SCORES, FOLDS, "bench", "mae",
                                                      None, 1))
