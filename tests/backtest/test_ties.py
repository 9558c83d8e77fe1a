"""Ordinary runs with tied candidates, or the benchmark alone, finish with their evidence.

Before the fix an annual series with a ``naive`` candidate crashed the run: the plan's
seasonal-naive benchmark (m = 1) made the same forecasts, and ``arch``'s confidence-set
bootstrap raised ``IndexError`` on the identical losses; the benchmark alone raised
``ValueError`` in the pairwise comparison.
"""

import numpy as np
import pandas as pd
import pytest
from arch.bootstrap import MCS
from statsmodels.datasets import nile

import backtest.evidence
from backtest.assessment import model_confidence_set
from backtest.candidates import parse_candidates
from backtest.engine import planned_fold_count, run_backtest
from backtest.plan import parse_plan
from backtest.series import make_series

NAIVE = {"family": "benchmark", "method": "naive"}


@pytest.fixture(scope="module")
def annual():
    """The Nile's annual flow at Aswan, 1871-1970 (Cobb 1978; statsmodels' ``nile``)."""
    data = nile.load_pandas().data
    return make_series("nile", "P1Y", zip(data["year"].astype(int).astype(str),
                                          data["volume"]))


def test_annual_naive_is_the_benchmark_and_runs_alone(annual):
    plan = parse_plan({"horizon": 3, "max_origins": 20})
    candidates = parse_candidates([NAIVE])
    assert planned_fold_count([annual], candidates, plan) == 20  # no seasonal naive added
    sr = run_backtest([annual], candidates, plan).series[0]
    assert [c.label for c in sr.candidates] == ["Naive"]
    assert sr.benchmark_id == candidates[0].id and not sr.candidates[0].added_as_benchmark
    (row,) = sr.ranking
    assert row.is_benchmark and row.rank == 1 and row.score > 0 and row.folds_ok == 20
    mase = next(s for s in sr.scores if s.metric == "mase" and s.horizon is None)
    assert mase.value == row.score
    nothing = "nothing to compare: the benchmark is the only candidate"
    assert sr.evidence["comparison"]["reason"] == nothing
    assert sr.evidence["comparison"]["pairwise"] is None
    assert sr.evidence["confidence_set"] == {"reason": nothing}
    assert sr.evidence["calibration"][candidates[0].id]  # calibration is still computed
    assert sr.evidence["unavailable"] == {}


def test_the_seasonal_naive_benchmark_alone_runs(annual):
    plan = parse_plan({"horizon": 2, "max_origins": 8, "benchmark": "drift"})
    sr = run_backtest([annual], parse_candidates([{"family": "benchmark", "method": "drift"}]),
                      plan).series[0]
    assert sr.ranking[0].score is not None and sr.evidence["comparison"]["benchmark"] is None


def test_identical_forecasts_are_reported_and_share_the_confidence_set(annual):
    """Two Theta specs on an annual series (no seasonal step either way) and seasonal
    naive beside naive: the same forecasts under two names each."""
    specs = [{"family": "theta", "season": "never"}, {"family": "theta", "season": "test"},
             NAIVE, {"family": "benchmark", "method": "seasonal_naive"}]
    plan = parse_plan({"horizon": 3, "max_origins": 30})
    candidates = parse_candidates(specs)
    sr = run_backtest([annual], candidates, plan).series[0]
    ids = [c.id for c in candidates]
    assert len(sr.candidates) == 4  # seasonal naive is a requested candidate, not added
    assert sr.benchmark_id == ids[3]
    assert sorted(map(sorted, sr.evidence["comparison"]["identical_forecasts"])) == \
        sorted([sorted(ids[:2]), sorted(ids[2:])])
    confidence = sr.evidence["confidence_set"]
    assert "included" in confidence, confidence
    assert sorted(map(sorted, confidence["ties"])) == sorted([sorted(ids[:2]), sorted(ids[2:])])
    for first, second in (ids[:2], ids[2:]):
        assert confidence["p_values"][first] == confidence["p_values"][second]
        assert (first in confidence["included"]) == (second in confidence["included"])
    assert sr.evidence["unavailable"] == {}


def test_confidence_set_with_tied_losses_equals_the_set_without_the_copy():
    """A copied column joins its original's verdict; the rest is arch's own set on the
    distinct columns (computed with arch 8.0.0)."""
    rng = np.random.default_rng(5)
    good = np.abs(rng.normal(0, 1, 60))
    bad = good + np.abs(rng.normal(1, 0.5, 60))
    other = np.abs(rng.normal(0, 1.05, 60))
    losses = np.column_stack([good, bad, good, other])
    out = model_confidence_set(losses, ["a", "b", "a2", "c"], seed=3)
    reference = MCS(pd.DataFrame(losses[:, [0, 1, 3]], columns=["a", "b", "c"]), size=0.10,
                    reps=1000, block_size=7, bootstrap="stationary", seed=3)
    reference.compute()
    expected = set(reference.included)
    assert set(out["included"]) == expected | ({"a2"} if "a" in expected else set())
    assert "b" in out["excluded"]
    assert out["p_values"]["a2"] == out["p_values"]["a"] == \
        pytest.approx(float(reference.pvalues.loc["a"].iloc[0]))
    assert out["ties"] == [["a", "a2"]]
    everything_tied = model_confidence_set(np.column_stack([good, good]), ["x", "y"], seed=0)
    assert everything_tied["included"] == ["x", "y"]
    assert everything_tied["p_values"] == {"x": 1.0, "y": 1.0}


def test_a_failing_evidence_step_degrades_to_a_reason(annual, monkeypatch):
    """Fault injection: the pairwise comparison raises; the run still ends with its scores,
    the other steps and the reason."""
    def broken(*args, **kwargs):
        raise IndexError("index 0 is out of bounds")

    monkeypatch.setattr(backtest.evidence, "pairwise", broken)
    plan = parse_plan({"horizon": 2, "max_origins": 10, "benchmark": "naive"})
    candidates = parse_candidates([{"family": "theta"}, {"family": "benchmark",
                                                          "method": "drift"}])
    sr = run_backtest([annual], candidates, plan).series[0]
    assert sr.evidence["comparison"]["pairwise"] is None
    assert sr.evidence["unavailable"] == {
        "comparison.pairwise": "IndexError: index 0 is out of bounds"}
    assert sr.evidence["comparison"]["benchmark"]["rows"]
    assert all(r.score is not None for r in sr.ranking)
