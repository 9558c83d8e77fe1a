"""The run cost estimate against what a run really writes and fits."""

from __future__ import annotations

from datetime import UTC, datetime

from backtest.candidates import parse_candidates
from backtest.cost import estimate_cost
from backtest.engine import run_backtest
from storage.results.rows import unit_rows
from tests.storage.builders import benchmark_candidates, monthly_series, small_plan


def test_the_row_estimate_equals_the_rows_a_run_writes():
    series = [monthly_series("a", n=40), monthly_series("b", n=52, seed=1)]
    candidates = benchmark_candidates()
    plan = small_plan(horizon=4, levels=[50, 80, 95], max_origins=7)

    result = run_backtest(series, candidates, plan)
    written = sum(len(rows) for unit in result.series
                  for rows in unit_rows(1, 1, unit, written_at=datetime.now(UTC),
                                        written_by="test").values())

    cost = estimate_cost(series, candidates, plan)
    assert cost.rows == written
    assert cost.folds == sum(len(unit.folds) for unit in result.series)


def test_fits_follow_the_refit_cadence_and_the_order_search_bound():
    series = [monthly_series("a", n=48)]
    candidates = parse_candidates([{"family": "arima", "order": [1, 0, 0]},
                                   {"family": "arima_search", "max_models": 10}])

    full = estimate_cost(series, candidates, small_plan(horizon=2, max_origins=9, refit=3))
    lean = estimate_cost(series, candidates, small_plan(horizon=2, max_origins=9, refit=3,
                                                        assessment="lean"))

    # 9 origins re-estimated every 3rd: 3 estimations, plus 1 whole-series fit when full;
    # the benchmark is closed-form, so estimated at every origin.
    assert full.fits == {"arima": 4, "arima_search": 40, "benchmark": 10}
    assert lean.fits == {"arima": 3, "arima_search": 30, "benchmark": 9}
