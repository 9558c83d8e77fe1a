"""Every backtest result carries the assessment evidence, and the ranking agrees with it."""

import json

import numpy as np
import pytest

from backtest.assessment import calibration_report, model_confidence_set
from backtest.candidates import parse_candidates
from backtest.engine import run_backtest
from backtest.evidence import matrices
from backtest.plan import parse_plan
from backtest.series import make_series

CANDIDATES = [
    {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
     "transform": "log"},
    {"family": "theta"},
    {"family": "benchmark", "method": "naive"},
]


@pytest.fixture(scope="module")
def airline_run(series_g):
    series = make_series("air", "P1M", zip(series_g.month, series_g.iloc[:, 1]))
    plan = parse_plan({"horizon": 3, "max_origins": 30, "refit": 10, "seed": 4})
    candidates = parse_candidates(CANDIDATES)
    return run_backtest([series], candidates, plan), candidates, plan


def test_evidence_sections_are_present_and_json_ready(airline_run):
    result, candidates, _ = airline_run
    evidence = result.series[0].evidence
    assert set(evidence) >= {"diagnostics", "stability", "calibration", "comparison",
                             "confidence_set", "ranking_tests"}
    json.dumps(result.to_dict(), allow_nan=False)
    airline = evidence["diagnostics"][candidates[0].id]
    names = [row["name"] for row in airline["coefficients"]]
    assert names == ["ma.L1", "ma.S.L12", "sigma2"]
    assert evidence["stability"][candidates[0].id]["n_folds"] == 3
    assert evidence["stability"][candidates[1].id] is None  # theta: closed form


def test_ranking_flags_match_the_evidence(airline_run):
    result, _, plan = airline_run
    sr = result.series[0]
    included = set(sr.evidence["confidence_set"]["included"])
    for row in sr.ranking:
        assert row.in_confidence_set == (row.candidate_id in included)
        assert (row.beats_benchmark is None) == row.is_benchmark
    best = sr.ranking[0]
    assert best.in_confidence_set and best.beats_benchmark


def test_confidence_set_is_reproducible_from_the_folds(airline_run):
    """Recompute the set from the stored folds: same per-origin losses, same seed."""
    result, _, plan = airline_run
    sr = result.series[0]
    ids = [c.candidate_id for c in sr.candidates]
    columns = []
    for cid in ids:
        a = matrices([f for f in sr.folds if f.candidate_id == cid], plan.horizon, plan.levels)
        columns.append(np.mean(np.abs((a["actual"] - a["point"]) / a["scale"][:, None]), 1))
    again = model_confidence_set(np.column_stack(columns), ids, size=0.10, reps=1000,
                                 seed=plan.seed)
    assert again["included"] == sr.evidence["confidence_set"]["included"]


def test_calibration_zone_is_the_worst_h1_zone(airline_run):
    result, _, plan = airline_run
    sr = result.series[0]
    order = ["consistent", "suspect", "excessive"]
    for row in sr.ranking:
        a = matrices([f for f in sr.folds if f.candidate_id == row.candidate_id],
                     plan.horizon, plan.levels)
        report = calibration_report(a["actual"], {lv: a[f"lower{lv}"] for lv in plan.levels},
                                    {lv: a[f"upper{lv}"] for lv in plan.levels}, plan.levels)
        zones = [level["by_horizon"][0]["zone"] for level in report]
        assert row.calibration_zone == max(zones, key=order.index)
