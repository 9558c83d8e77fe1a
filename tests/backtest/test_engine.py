"""The engine end to end: parallel equality, streaming, refit semantics, failures, progress."""

import json
from dataclasses import dataclass
from typing import ClassVar

import numpy as np
import pytest
from statsmodels.tsa.arima.model import ARIMA

from backtest.candidates import Candidate, parse_candidates
from backtest.demo import demo_series
from backtest.engine import planned_fold_count, run_backtest, stream_backtest
from backtest.models.benchmarks import BenchmarkSpec
from backtest.plan import parse_plan
from backtest.scoring import score_candidate
from backtest.series import make_series

CANDIDATES = [
    {"family": "arima", "order": [1, 0, 0], "seasonal": {"order": [0, 1, 1]},
     "deterministic": "drift"},
    {"family": "ets", "error": "multiplicative", "trend": "additive", "season": "none"},
    {"family": "theta"},
    {"family": "benchmark", "method": "naive"},
]


@pytest.fixture(scope="module")
def two_series():
    return demo_series()[:2]


def _strip_timing(result):
    body = result.to_dict()
    body.pop("timing")
    return body


def test_same_results_for_one_and_two_jobs(two_series):
    plan = parse_plan({"horizon": 4, "max_origins": 5, "refit": 2, "seed": 3})
    candidates = parse_candidates(CANDIDATES)
    serial = run_backtest(two_series, candidates, plan, n_jobs=1)
    parallel = run_backtest(two_series, candidates, plan, n_jobs=2)
    assert _strip_timing(serial) == _strip_timing(parallel)
    json.dumps(serial.to_dict(), allow_nan=False)


@pytest.mark.parametrize("n_jobs", [1, 2])
def test_streamed_series_equal_the_whole_run_and_come_before_it_ends(two_series, n_jobs):
    plan = parse_plan({"horizon": 3, "max_origins": 4, "refit": 2})
    candidates = parse_candidates(CANDIDATES[::3])
    whole = run_backtest(two_series, candidates, plan, n_jobs=1)
    seen: list[tuple[int, int]] = []
    streamed, done_at_yield = {}, []
    for position, result in stream_backtest(two_series, candidates, plan, n_jobs=n_jobs,
                                            progress=lambda d, t: seen.append((d, t))):
        done_at_yield.append(seen[-1][0])
        streamed[position] = result
    assert sorted(streamed) == [0, 1]
    for position, result in streamed.items():
        assert result == whole.series[position]
    total = planned_fold_count(two_series, candidates, plan)
    assert seen[-1] == (total, total)
    # The first series is handed over while the second one's folds are still to come.
    assert done_at_yield[0] < total


def test_closing_the_stream_early_stops_the_run(two_series):
    plan = parse_plan({"horizon": 2, "max_origins": 3})
    seen: list[int] = []
    units = stream_backtest(two_series, parse_candidates(CANDIDATES[-1:]), plan,
                            progress=lambda done, total: seen.append(done))
    position, _ = next(units)
    units.close()
    assert position == 0
    assert max(seen) == 6 < 12  # two candidates x 3 origins of the first series only


def test_bad_input_is_raised_before_the_stream_is_read(two_series):
    too_long = parse_plan({"horizon": 2, "first_origin": {"train_size": 10_000}})
    with pytest.raises(Exception, match="train"):
        stream_backtest(two_series, parse_candidates(CANDIDATES[-1:]), too_long)


def test_benchmark_is_added_and_ranked(two_series):
    plan = parse_plan({"horizon": 3, "max_origins": 3})
    result = run_backtest(two_series[:1], parse_candidates(CANDIDATES[-1:]), plan)
    (sr,) = result.series
    assert [c.label for c in sr.candidates] == ["Naive", "Seasonal naive, m=12"]
    assert sr.candidates[1].added_as_benchmark
    bench = next(r for r in sr.ranking if r.is_benchmark)
    assert bench.ratio_to_benchmark == 1.0
    assert sorted(r.rank for r in sr.ranking) == [1, 2]
    assert sr.ranking[0].score <= sr.ranking[1].score


def test_progress_counts_every_fold(two_series):
    seen = []
    plan = parse_plan({"horizon": 2, "max_origins": 4})
    run_backtest(two_series, parse_candidates(CANDIDATES[-1:]), plan,
                 progress=lambda done, total: seen.append((done, total)))
    assert seen[0] == (0, 16) and seen[-1] == (16, 16)
    assert [d for d, _ in seen] == sorted(d for d, _ in seen)


def test_refit_one_equals_a_hand_written_loop(log_air):
    """Each fold's forecast is what fitting statsmodels on the window and forecasting gives."""
    values = np.exp(log_air)
    series = make_series("air", "P1M", [(f"{1949 + i // 12}-{i % 12 + 1:02d}", v)
                                        for i, v in enumerate(values)])
    spec = {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
            "transform": "log"}
    plan = parse_plan({"horizon": 3, "max_origins": 3, "refit": 1, "estimator": "reference"})
    result = run_backtest([series], parse_candidates([spec]), plan)
    folds = [f for f in result.series[0].folds if f.candidate_id != result.series[0].benchmark_id]
    for fold, end in zip(folds, (139, 140, 141)):
        hand = ARIMA(log_air[:end], order=(0, 1, 1), seasonal_order=(0, 1, 1, 12)).fit()
        prediction = hand.get_forecast(3)
        np.testing.assert_allclose(fold.point, np.exp(prediction.predicted_mean), rtol=1e-9)
        np.testing.assert_allclose(fold.lower[95], np.exp(prediction.conf_int(alpha=0.05)[:, 0]),
                                   rtol=1e-9)


def test_refit_one_under_the_default_fast_estimator(log_air):
    """Under the default (fast) estimator each fold forecasts as statsmodels does at the
    fold's own estimates, whose likelihood is at least the hand-written fit's: the
    precision the objective allows (the optimiser's stopping point is not portable)."""
    values = np.exp(log_air)
    series = make_series("air", "P1M", [(f"{1949 + i // 12}-{i % 12 + 1:02d}", v)
                                        for i, v in enumerate(values)])
    spec = {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
            "transform": "log"}
    plan = parse_plan({"horizon": 3, "max_origins": 3, "refit": 1})
    assert plan.estimator == "fast"
    result = run_backtest([series], parse_candidates([spec]), plan)
    folds = [f for f in result.series[0].folds if f.candidate_id != result.series[0].benchmark_id]
    for fold, end in zip(folds, (139, 140, 141)):
        assert fold.params["estimator"] == 1.0
        model = ARIMA(log_air[:end], order=(0, 1, 1), seasonal_order=(0, 1, 1, 12))
        at_fold = model.filter([fold.params[k] for k in ("ma.L1", "ma.S.L12", "sigma2")])
        np.testing.assert_allclose(fold.point, np.exp(at_fold.get_forecast(3).predicted_mean),
                                   rtol=1e-9)
        assert at_fold.llf >= model.fit().llf - 1e-6


def test_kept_parameters_condition_on_new_data(two_series):
    spec = CANDIDATES[0]
    plan = parse_plan({"horizon": 2, "max_origins": 3, "refit": 3})
    (sr,) = run_backtest(two_series[:1], parse_candidates([spec]), plan).series
    arima = [f for f in sr.folds if f.candidate_id != sr.benchmark_id]
    assert [f.reestimated for f in arima] == [True, False, False]
    assert arima[0].params == arima[1].params == arima[2].params
    values = np.asarray(two_series[0].values)
    end = len(values) - 2
    model = ARIMA(values[:end], order=(1, 0, 0), seasonal_order=(0, 1, 1, 12), trend="t")
    vector = [arima[2].params[k] for k in ("drift", "ar.L1", "ma.S.L12", "sigma2")]
    expected = model.filter(vector).get_forecast(2).predicted_mean
    np.testing.assert_allclose(arima[2].point, expected, rtol=1e-10)


@dataclass(frozen=True)
class FlakyBenchmark(BenchmarkSpec):
    """The naive method, failing whenever the training window has an odd length."""

    family: ClassVar[str] = "benchmark"

    def fit_forecast(self, y, season_length, horizon, levels, seed):
        if len(y) % 2:
            raise ValueError("odd window")
        return super().fit_forecast(y, season_length, horizon, levels, seed)


def test_a_failing_fold_is_recorded_not_fatal(two_series):
    flaky = Candidate(FlakyBenchmark("naive"))
    plan = parse_plan({"horizon": 2, "max_origins": 4})
    (sr,) = run_backtest(two_series[:1], [flaky], plan).series
    own = [f for f in sr.folds if f.candidate_id == flaky.id]
    assert [f.status for f in own] == ["failed", "ok", "failed", "ok"]
    assert own[0].reason == "ValueError: odd window" and own[0].point is None
    row = next(r for r in sr.ranking if r.candidate_id == flaky.id)
    assert (row.folds_ok, row.folds_failed) == (2, 2)


def test_the_ranking_compares_candidates_on_the_origins_all_completed(two_series):
    flaky = Candidate(FlakyBenchmark("naive"))
    plan = parse_plan({"horizon": 2, "max_origins": 4})
    (sr,) = run_backtest(two_series[:1], [flaky], plan).series
    rows = {r.candidate_id: r for r in sr.ranking}
    bench = rows[sr.benchmark_id]
    own = next(s.value for s in sr.scores if (s.candidate_id, s.metric, s.horizon, s.level)
               == (sr.benchmark_id, "mase", None, None))
    common = [f for f in sr.folds if f.candidate_id == sr.benchmark_id and f.fold in (1, 3)]
    on_common = next(s.value for s in score_candidate(sr.benchmark_id, common, 2, ())
                     if s.metric == "mase" and s.horizon is None)
    assert bench.common_folds == rows[flaky.id].common_folds == 2
    assert bench.score_own_folds == own and bench.score == on_common != own
    assert rows[flaky.id].ratio_to_benchmark == pytest.approx(rows[flaky.id].score / bench.score)
