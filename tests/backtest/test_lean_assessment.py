"""The plan's lean assessment: recorded with the run, and equal to the full assessment in
everything but the per-fold standard errors and the full-series diagnostics it leaves out."""

import numpy as np
import pytest

from backtest.candidates import parse_candidate, parse_candidates
from backtest.demo import demo_series
from backtest.engine import run_backtest
from backtest.errors import PlanError
from backtest.plan import parse_plan

CANDIDATES = [
    {"family": "arima", "order": [1, 0, 0], "seasonal": {"order": [0, 1, 1]},
     "deterministic": "drift", "transform": "log"},
    {"family": "arima", "order": [0, 1, 1], "transform": {"kind": "boxcox", "lambda": 0.5}},
    {"family": "ets", "error": "multiplicative", "trend": "damped", "season": "none"},
    {"family": "theta"},
    {"family": "arima_search", "seasonal": False, "max_models": 6},
    {"family": "benchmark", "method": "drift"},
]


@pytest.fixture(scope="module")
def both():
    """The same backtest under a full and a lean assessment, as JSON-ready bodies."""
    series = demo_series()[:1]
    candidates = parse_candidates(CANDIDATES)
    bodies = {}
    for assessment in ("full", "lean"):
        plan = parse_plan({"horizon": 3, "max_origins": 5, "refit": 2, "seed": 7,
                           "assessment": assessment})
        body = run_backtest(series, candidates, plan).to_dict()
        body.pop("timing")
        bodies[assessment] = body
    return bodies


def test_full_by_default_recorded_and_checked():
    assert parse_plan({"horizon": 2}).assessment == "full"
    lean = parse_plan({"horizon": 2, "assessment": "lean"})
    assert lean.canonical()["assessment"] == "lean"
    assert parse_plan(lean.canonical()) == lean
    with pytest.raises(PlanError, match="assessment must be one of full, lean"):
        parse_plan({"horizon": 2, "assessment": "none"})


def test_forecasts_scores_and_comparisons_are_the_full_ones(both):
    full, lean = both["full"], both["lean"]
    assert (full["plan"]["assessment"], lean["plan"]["assessment"]) == ("full", "lean")
    for f_series, l_series in zip(full["series"], lean["series"], strict=True):
        assert len(f_series["folds"]) == 7 * 5  # the plan adds the seasonal naive benchmark
        for f_fold, l_fold in zip(f_series["folds"], l_series["folds"], strict=True):
            assert l_fold["fit_summary"] is None
            assert {**f_fold, "fit_summary": None} == l_fold
        for key in ("scores", "ranking", "candidates", "series", "benchmark_id"):
            assert f_series[key] == l_series[key]
        for key in ("calibration", "comparison", "ranking_tests", "confidence_set"):
            assert f_series["evidence"][key] == l_series["evidence"][key]


def test_lean_leaves_out_diagnostics_and_standard_errors(both):
    full, lean = both["full"]["series"][0], both["lean"]["series"][0]
    assert all(report is not None for report in full["evidence"]["diagnostics"].values())
    assert set(lean["evidence"]["diagnostics"].values()) == {None}
    models = [c["candidate_id"] for c in lean["candidates"]
              if c["spec"]["family"] in ("arima", "ets")]
    assert len(models) == 3
    for cid in models:
        refitted = [f for f in full["folds"] if f["candidate_id"] == cid and f["reestimated"]]
        assert len(refitted) == 3 and all(f["fit_summary"]["params"] for f in refitted)
        full_rows = full["evidence"]["stability"][cid]["coefficients"]
        lean_rows = lean["evidence"]["stability"][cid]["coefficients"]
        assert any(row["median_std_error"] is not None for row in full_rows)
        assert all(row["median_std_error"] is None for row in lean_rows)
        assert [r["path"] for r in full_rows] == [r["path"] for r in lean_rows]


@pytest.mark.parametrize("season", ["additive", "multiplicative"])
def test_ets_without_the_results_object_estimates_and_forecasts_the_same(series_g, season):
    spec = parse_candidate({"family": "ets", "error": "additive", "trend": "additive",
                            "season": season}).spec
    y = series_g.iloc[:96, 1].to_numpy(float)
    kept, kept_forecast = spec.fit_forecast(y, 12, 6, (80, 95), 5)
    lean, lean_forecast = spec.fit_forecast(y, 12, 6, (80, 95), 5, keep_raw=False)
    assert kept.raw is not None and lean.raw is None
    assert lean.params == kept.params
    np.testing.assert_array_equal(lean_forecast.mean, kept_forecast.mean)
    for level in (80, 95):
        np.testing.assert_array_equal(lean_forecast.lower[level], kept_forecast.lower[level])
        np.testing.assert_array_equal(lean_forecast.upper[level], kept_forecast.upper[level])
