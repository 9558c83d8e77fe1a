"""The demo's remedies: on the invented fleet-fuel series, Theta's one-step 80/95 %
intervals are too narrow (suspect); with empirical intervals from its own past errors the
verdict is consistent. The lines are read from the ranking, not written in."""

from dataclasses import asdict

from backtest.candidates import parse_candidates
from backtest.demo import COMBINED, DEMO_CANDIDATES, DEMO_PLAN, RECALIBRATED, demo_series
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from service.demo.remedies import remedy_lines


def test_recalibration_moves_the_fleet_fuel_verdict_to_consistent():
    fuel = next(s for s in demo_series() if s.key == "costs/fleet-fuel")
    (model, twin), = RECALIBRATED
    candidates = parse_candidates([DEMO_CANDIDATES[model], DEMO_CANDIDATES[twin]])
    sr = run_backtest([fuel], candidates, parse_plan(DEMO_PLAN)).series[0]
    rows = [{**asdict(r), "series_key": fuel.key, "candidate": r.label} for r in sr.ranking]

    assert remedy_lines(rows) == [
        f"costs/fleet-fuel: {candidates[0].label(12)} calibration at h = 1 suspect; with "
        "empirical intervals consistent"]


def test_a_combination_is_reported_with_its_rank():
    combination = parse_candidates([DEMO_CANDIDATES[COMBINED[0]]])[0]
    rows = [{"series_key": "k", "candidate_id": combination.id, "candidate": "C",
             "rank": 2, "in_confidence_set": True, "calibration_zone": "consistent"},
            {"series_key": "k", "candidate_id": "c0", "candidate": "B", "rank": 1,
             "in_confidence_set": True, "calibration_zone": "consistent"}]
    assert remedy_lines(rows) == ["k: C ranked 2 of 2, in the confidence set"]
