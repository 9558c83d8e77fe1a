"""The demo's remedies: on the invented fleet-fuel series, Theta's one-step 80/95 %
intervals are too narrow (suspect); with empirical intervals from its own past errors the
verdict is consistent. The lines are read from the ranking, not written in."""

from dataclasses import asdict

from backtest.candidates import parse_candidates
from backtest.demo import COMBINED, DEMO_CANDIDATES, DEMO_PLAN, RECALIBRATED, demo_series
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from service.demo.remedies import headlines, remedy_lines


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
    assert headlines(remedy_lines(rows)) == []
    rows[0]["rank"], rows[1]["rank"] = 1, 2
    assert headlines(remedy_lines(rows)) == ["k: C ranked 1 of 2, in the confidence set"]


def test_the_combination_takes_the_top_of_the_pallets_ranking():
    """On the invented pallets series (steady growth, seasonal swing in proportion) the
    demo's mean combination ranks first of all nine candidates, alone in the confidence
    set, and the demo's closing lines say so; the members' own ranks are below it."""
    pallets = next(s for s in demo_series() if s.key == "volumes/pallets-shipped")
    candidates = parse_candidates(DEMO_CANDIDATES)
    sr = run_backtest([pallets], candidates, parse_plan(DEMO_PLAN)).series[0]
    rows = [{**asdict(r), "series_key": pallets.key, "candidate": r.label} for r in sr.ranking]
    combination = candidates[COMBINED[0]]
    top = next(r for r in sr.ranking if r.rank == 1)
    assert top.candidate_id == combination.id
    members = [c.id for c in parse_candidates(DEMO_CANDIDATES[COMBINED[0]]["members"])]
    assert all(r.score > top.score for r in sr.ranking if r.candidate_id in members)
    line = f"{pallets.key}: {combination.label(12)} ranked 1 of {len(sr.ranking)}"
    assert [h for h in headlines(remedy_lines(rows)) if h.startswith(line)]
