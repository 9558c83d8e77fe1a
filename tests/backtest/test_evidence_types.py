"""The typed evidence objects keep the JSON form of each evidence section: keys, their
order, and what a missing or failed section looks like."""

from __future__ import annotations

from backtest.evidence_types import (
    Calibration,
    Comparison,
    ConfidenceSet,
    RankingTests,
    Report,
    SeriesEvidence,
)


def _level(zone_h1: str | None) -> dict:
    return {"level": 80, "by_horizon": [{"horizon": 1, "zone": zone_h1},
                                        {"horizon": 2, "zone": "excessive"}]}


def test_calibration_zone_is_the_worst_one_step_zone_over_levels():
    assert Calibration((_level("consistent"), _level("suspect"))).h1_zone == "suspect"
    assert Calibration((_level(None),)).h1_zone is None
    assert Calibration(({"level": 95, "by_horizon": []},)).h1_zone is None
    assert Calibration((_level("consistent"),)).to_dict() == [_level("consistent")]


def test_comparison_says_why_there_is_nothing_to_compare_before_the_identical_groups():
    alone = Comparison(None, None, (), "nothing to compare").to_dict()
    several = Comparison({"rows": []}, {"rows": [1]}, (("c1", "c2"),)).to_dict()

    assert list(alone) == ["errors", "benchmark", "pairwise", "reason", "identical_forecasts"]
    assert list(several) == ["errors", "benchmark", "pairwise", "identical_forecasts"]
    assert several["identical_forecasts"] == [["c1", "c2"]]
    assert several["errors"] == "scaled by each fold's MASE scale"


def test_confidence_set_table_reason_and_candidates_without_loss():
    found = ConfidenceSet({"included": ["a", "b"], "excluded": ["c"]}, without_loss=("d",))
    failed = ConfidenceSet(None, "ValueError: boom")

    assert found.included == frozenset({"a", "b"})
    assert found.to_dict() == {"included": ["a", "b"], "excluded": ["c"], "without_loss": ["d"]}
    assert failed.included is None
    assert failed.to_dict() == {"reason": "ValueError: boom"}


def test_series_evidence_sections_in_their_documented_order():
    evidence = SeriesEvidence(
        {"a": Calibration((_level("consistent"),)), "b": None},
        Comparison(None, None, (), "nothing to compare"),
        RankingTests("absolute", 0.05, None, {"a": True}),
        ConfidenceSet(None, "nothing to compare"), {"calibration.b": "ValueError: x"},
        diagnostics={"a": Report({"family": "theta"}), "b": Report(error="ValueError: y")},
        stability={"a": None, "b": None})

    out = evidence.to_dict()

    assert list(out) == ["calibration", "comparison", "ranking_tests", "confidence_set",
                         "unavailable", "diagnostics", "stability"]
    assert out["calibration"]["b"] is None
    assert out["ranking_tests"] == {"loss": "absolute", "alpha": 0.05, "horizon": None,
                                    "benchmark": {"a": True}}
    assert out["diagnostics"] == {"a": {"family": "theta"}, "b": {"error": "ValueError: y"}}
    assert out["stability"] == {"a": None, "b": None}
