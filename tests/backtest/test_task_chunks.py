"""A task cut into chunks of origins when tasks are fewer than workers: where it is cut,
and that the run's results are those of the uncut run, computed by real worker processes."""

from __future__ import annotations

import pytest

from backtest.candidates import parse_candidates
from backtest.demo import demo_series
from backtest.engine import planned_origins, run_backtest
from backtest.folds import Origin
from backtest.plan import parse_plan
from backtest.task_chunks import plan_units, split_origins

ARIMA = {"family": "arima", "order": [1, 1, 0]}
NAIVE = {"family": "benchmark", "method": "naive"}


def _origins(count: int, refit: int, first_end: int = 40) -> tuple[Origin, ...]:
    return tuple(Origin(i, 0, first_end + i, i % refit == 0) for i in range(count))


@pytest.mark.parametrize(("count", "refit", "parts"), [(24, 1, 2), (24, 3, 3), (10, 4, 5),
                                                       (7, 1, 7)])
def test_chunks_start_at_reestimations_cover_every_origin_and_cost_about_the_same(
        count, refit, parts):
    origins = _origins(count, refit)
    chunks = split_origins(origins, parts)
    assert tuple(o for chunk in chunks for o in chunk) == origins
    assert all(chunk[0].reestimate for chunk in chunks)
    groups = sum(o.reestimate for o in origins)
    assert len(chunks) == min(parts, groups)
    costs = [sum(o.end for o in chunk if o.reestimate) for chunk in chunks]
    largest_group = max(o.end for o in origins) * refit
    assert max(costs) - min(costs) <= largest_group


def test_the_diagnostics_weigh_on_the_first_chunk():
    origins = _origins(24, 1)
    even, loaded = split_origins(origins, 2), split_origins(origins, 2, diagnostics_cost=200)
    assert len(loaded[0]) < len(even[0])


def _tasks(candidates: list[dict], plan_body: dict):
    series = demo_series()[:1]
    plan = parse_plan(plan_body)
    ((pool, origins),) = planned_origins(series, parse_candidates(candidates), plan)
    return [(series[0], c, plan, origins) for c in pool]


def test_only_estimating_tasks_are_cut_and_only_when_fewer_than_workers():
    body = {"horizon": 3, "max_origins": 12, "refit": 2}
    units = plan_units(_tasks([ARIMA], body), 2)
    # the ARIMA task in two chunks (the first with the diagnostics), the benchmark whole
    assert [(u.task, len(u.origins), u.whole, u.diagnose) for u in units][2] == (1, 12, True, True)
    assert [u.task for u in units[:2]] == [0, 0] and units[0].diagnose and not units[1].diagnose
    assert not any(u.whole for u in units[:2])
    assert len(plan_units(_tasks([ARIMA], body), 4)) == 1 + 4
    assert len(plan_units(_tasks([ARIMA, {**ARIMA, "order": [0, 1, 1]}], body), 2)) == 3
    warm = plan_units(_tasks([ARIMA], {**body, "warm_start": True}), 2)
    assert all(u.whole for u in warm)
    assert all(u.whole for u in plan_units(_tasks([NAIVE], body), 2))


def _strip_timing(result) -> dict:
    body = result.to_dict()
    body.pop("timing")
    return body


@pytest.mark.parametrize("candidate", [
    ARIMA,
    {"family": "combination", "members": [{**ARIMA, "order": [0, 1, 1]}, NAIVE]},
    {**ARIMA, "intervals": {"kind": "empirical", "min_errors": 5}},
], ids=["arima", "combination", "empirical-intervals"])
def test_a_cut_run_on_two_workers_equals_the_uncut_run(candidate):
    series = demo_series()[:1]
    body = {"horizon": 3, "max_origins": 14, "refit": 2, "seed": 5}
    plan, candidates = parse_plan(body), parse_candidates([candidate])
    assert not plan_units(_tasks([candidate], body), 2)[0].whole
    seen: list[tuple[int, int]] = []
    whole = run_backtest(series, candidates, plan, n_jobs=1)
    cut = run_backtest(series, candidates, plan, n_jobs=2,
                       progress=lambda done, total: seen.append((done, total)))
    assert _strip_timing(cut) == _strip_timing(whole)
    assert cut.series[0].folds == whole.series[0].folds
    # progress moves with each chunk and ends at every fold
    assert len(seen) >= 3 and seen[-1] == (28, 28)
    assert [d for d, _ in seen] == sorted(d for d, _ in seen)
