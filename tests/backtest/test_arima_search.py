"""The arima_search family: differencing tests, stepwise search, rejection rules, spec parsing."""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest
from statsmodels.tools.sm_exceptions import ConvergenceWarning
from statsmodels.tsa.arima.model import ARIMA
from threadpoolctl import threadpool_limits

from backtest.candidates import parse_candidate
from backtest.errors import CandidateError
from backtest.models.arima import ArimaSpec
from backtest.models.arima_search import ArimaSearchSpec, OrderLimits, parse, search_orders
from backtest.models.arima_trial import MAX_INVERSE_ROOT, largest_inverse_root, run_trial
from backtest.models.differencing import (
    STRONG_SEASONALITY,
    choose_differencing,
    kpss_level,
    ordinary_differences,
    seasonal_difference,
)
from backtest.models.stepwise import (
    ArmaOrders,
    SearchBounds,
    neighbours,
    starting_orders,
    stepwise_search,
)
from tests.backtest.airline_reference import LOGLIK_TOLERANCE, MAX_LOGLIK
from tests.conftest import series_g_path

# Toy quarterly series x used for the KPSS check values.
TOY = np.array([12, 15, 20, 14, 13, 17, 22, 15, 15, 18, 24, 17, 16, 20, 25, 18], dtype=float)
# Airline model ARIMA(0,1,1)×(0,1,1), season 12, on log Series G (Box & Jenkins 1976, ch. 9, chapter
# recalled) at the maximum of its exact likelihood: AICc = -2 log L + 2K + 2K(K+1)/(N-K-1)
# (Hurvich & Tsai 1989), K = 3, N = 131; an optimiser's stopping point may lose up to
# 2 * LOGLIK_TOLERANCE of it.
AIRLINE_AICC = -2 * MAX_LOGLIK + 2 * 3 + 2 * 3 * 4 / (131 - 3 - 1)
BOUNDS = SearchBounds(p=3, q=3, seasonal_p=1, seasonal_q=1, deterministic=True)


@pytest.fixture(scope="module", autouse=True)
def one_blas_thread():
    # As in the engine's workers (backtest.parallel): many small fits, BLAS threads only slow.
    with threadpool_limits(limits=1):
        yield


@pytest.fixture(scope="module")
def log_series_g() -> np.ndarray:
    values = pd.read_csv(series_g_path())["passengers_thousands"].to_numpy(dtype=float)
    # Box & Jenkins Series G: 144 monthly totals, Jan 1949 - Dec 1960, summing to 40363.
    assert (len(values), values.sum()) == (144, 40363)
    return np.log(values)


def simulate_arma(n: int, phi: float, theta: float, mean: float, seed: int) -> np.ndarray:
    """y_t - mean = phi (y_{t-1} - mean) + e_t + theta e_{t-1}, e ~ N(0, 1), 100 burn-in."""
    burn = 100
    e = np.random.default_rng(seed).standard_normal(n + burn)
    x = np.zeros(n + burn)
    for t in range(1, n + burn):
        x[t] = phi * x[t - 1] + e[t] + theta * e[t - 1]
    return mean + x[burn:]


@pytest.fixture(scope="module")
def arma_series() -> np.ndarray:
    return simulate_arma(200, phi=0.6, theta=0.4, mean=5.0, seed=0)


def fit_recording(spec: ArimaSearchSpec, y: np.ndarray, season_length: int):
    """Fit, returning the fit and the warnings the chosen model re-emitted."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        fit = spec.fit(y, season_length)
    return fit, caught


@pytest.fixture(scope="module")
def series_g_fit(log_series_g):
    return fit_recording(parse({"family": "arima_search"}), log_series_g, 12)


@pytest.fixture(scope="module")
def airline_differencing_selection(log_series_g):
    return search_orders(log_series_g, 12, 1, 1, OrderLimits(), "aicc", 40)


@pytest.fixture(scope="module")
def arma_fit(arma_series):
    return fit_recording(parse({"family": "arima_search"}), arma_series, 1)


# --- differencing ------------------------------------------------------------------------


@pytest.mark.parametrize(("nlags", "expected"), [(0, 0.468949), (2, 0.514764)])
def test_kpss_level_statistic_on_toy_series(nlags, expected):
    # Kwiatkowski, Phillips, Schmidt & Shin (1992), level statistic; values from
    # statsmodels.tsa.stattools.kpss(x, "c", nlags); 5 % critical value 0.463 from their
    # Table 1 (recalled, and equal to statsmodels' table).
    statistic, critical = kpss_level(TOY, nlags)
    assert statistic == pytest.approx(expected, abs=1e-6)
    assert critical == pytest.approx(0.463)


def test_kpss_level_statistic_equals_the_partial_sum_formula():
    # KPSS (1992): eta = sum S_t^2 / (T^2 s^2(l)), S_t partial sums of the demeaned series,
    # s^2(l) the Bartlett-weighted long-run variance with weights 1 - s/(l + 1).
    lags = 2
    e = TOY - TOY.mean()
    n = len(e)
    long_run = e @ e / n
    for s in range(1, lags + 1):
        long_run += 2 * (1 - s / (lags + 1)) * sum(e[t] * e[t - s] for t in range(s, n)) / n
    partial = np.cumsum(e)
    assert kpss_level(TOY, lags)[0] == pytest.approx(partial @ partial / (n**2 * long_run))


def test_kpss_on_log_series_g_levels_and_first_differences(log_series_g):
    # statsmodels kpss, level, automatic bandwidth (Hobijn, Franses & Ooms 1998):
    # log Series G 1.668651 (rejects at 5 %), its first differences 0.038304 (does not).
    assert kpss_level(log_series_g)[0] == pytest.approx(1.668651, abs=1e-6)
    assert kpss_level(np.diff(log_series_g))[0] == pytest.approx(0.038304, abs=1e-6)
    assert ordinary_differences(log_series_g, max_d=2) == 1


def test_log_series_g_gets_one_seasonal_and_no_ordinary_difference(log_series_g):
    chosen = choose_differencing(log_series_g, 12, max_d=2, max_seasonal_d=1)
    assert chosen.seasonal_d == 1
    assert chosen.seasonal_strength >= STRONG_SEASONALITY
    # After (1 - B^12) the automatic-bandwidth KPSS statistic is below the 5 % value, so d = 0,
    # unlike the d = 1 of the airline model; with a short bandwidth (nlags <= 2) it rejects.
    statistic, critical = kpss_level(seasonal_difference(log_series_g, 12, 1))
    assert statistic < critical
    assert chosen.d == 0


def test_white_noise_is_not_differenced_and_a_strong_cycle_is_seasonally_differenced():
    rng = np.random.default_rng(7)
    noise = rng.standard_normal(120)
    cycle = 10 * np.sin(2 * np.pi * np.arange(120) / 12) + noise
    flat = choose_differencing(noise, 12, max_d=2, max_seasonal_d=1)
    seasonal = choose_differencing(cycle, 12, max_d=2, max_seasonal_d=1)
    assert (flat.d, flat.seasonal_d) == (0, 0)
    assert flat.seasonal_strength < STRONG_SEASONALITY <= seasonal.seasonal_strength
    assert seasonal.seasonal_d == 1


def test_seasonal_strength_is_skipped_on_fewer_than_three_seasons():
    short = np.sin(2 * np.pi * np.arange(30) / 12)
    chosen = choose_differencing(short, 12, 2, 1)
    assert chosen.seasonal_d == 0 and chosen.seasonal_strength is None


# --- stepwise search (no fitting) --------------------------------------------------------


def test_neighbourhood_has_thirteen_moves_inside_the_bounds():
    # Hyndman & Khandakar (2008): p, q, P, Q by +-1 (8), (p, q) and (P, Q) jointly by
    # +-1 (4), the constant toggled (1).
    current = ArmaOrders(1, 1, 1, 1, True)
    inner = neighbours(current, SearchBounds(3, 3, 2, 2, True))
    assert len(inner) == len(set(inner)) == 13 and current not in inner
    # At P = 1 <= 1 and Q = 0: P + 1, Q - 1, (P, Q) - 1 and (P, Q) + 1 fall outside.
    edge = neighbours(ArmaOrders(1, 1, 1, 0, True), SearchBounds(3, 3, 1, 1, True))
    assert len(edge) == 13 - 4
    assert all(BOUNDS.admits(m) for m in edge)


def test_neighbourhood_at_the_origin_without_a_term_only_grows():
    moves = neighbours(ArmaOrders(0, 0, 0, 0, False), SearchBounds(3, 3, 1, 1, False))
    assert sorted((m.p, m.q, m.seasonal_p, m.seasonal_q) for m in moves) == [
        (0, 0, 0, 1), (0, 0, 1, 0), (0, 0, 1, 1), (0, 1, 0, 0), (1, 0, 0, 0), (1, 1, 0, 0)]


def test_starting_orders_drop_seasonal_parts_without_a_season():
    starts = starting_orders(SearchBounds(3, 3, 0, 0, True))
    assert [(s.p, s.q, s.seasonal_p, s.seasonal_q) for s in starts] == [
        (2, 2, 0, 0), (0, 0, 0, 0), (1, 0, 0, 0), (0, 1, 0, 0)]
    assert all(s.deterministic for s in starts)


def test_stepwise_search_walks_to_the_minimum_of_a_bowl_scoring_each_order_once():
    target = ArmaOrders(3, 0, 1, 0, False)
    calls: list[ArmaOrders] = []

    def bowl(o: ArmaOrders) -> float:
        calls.append(o)
        return ((o.p - 3) ** 2 + o.q**2 + (o.seasonal_p - 1) ** 2 + o.seasonal_q**2
                + 0.5 * o.deterministic)

    ranked = stepwise_search(bowl, BOUNDS, max_models=100)
    assert ranked[0] == target
    assert len(calls) == len(set(calls))
    assert [bowl(o) for o in ranked] == sorted(bowl(o) for o in ranked)


def test_stepwise_search_respects_the_budget_and_skips_rejected_orders():
    calls: list[ArmaOrders] = []

    def only_white_noise(o: ArmaOrders) -> float:
        calls.append(o)
        return 1.0 if (o.p, o.q, o.seasonal_p, o.seasonal_q) == (0, 0, 0, 0) else np.inf

    ranked = stepwise_search(only_white_noise, BOUNDS, max_models=6)
    assert len(calls) == 6
    assert ranked == [ArmaOrders(0, 0, 0, 0, True)]


# --- rejection rules ---------------------------------------------------------------------


def test_largest_inverse_root_of_factored_polynomials():
    # (1 - 0.2z)(1 - 0.3z) = 1 - 0.5z + 0.06z^2 has inverse roots 0.2 and 0.3;
    # 1 + 0.5z has inverse root -0.5.
    assert largest_inverse_root(np.array([1.0, -0.5, 0.06])) == pytest.approx(0.3)
    assert largest_inverse_root(np.array([1.0, 0.5])) == pytest.approx(0.5)
    assert largest_inverse_root(np.array([1.0])) == 0.0


def test_over_differenced_noise_is_rejected_for_a_unit_ma_root():
    # Differencing white noise gives the non-invertible MA(1) (1 - B) e_t (Box & Jenkins):
    # the fitted MA root sits at the unit circle.
    w = np.diff(np.random.default_rng(1).standard_normal(150))
    trial = run_trial(ArimaSpec((0, 0, 1)), w, 1, "aicc")
    assert abs(trial.results.maparams[0]) > MAX_INVERSE_ROOT
    assert trial.verdict == "near_unit_root" and trial.score == np.inf


def test_an_order_longer_than_the_data_is_not_fitted():
    trial = run_trial(ArimaSpec((2, 0, 2), (1, 1, 1), 12), np.arange(20.0), 12, "aicc")
    assert trial.verdict == "too_short" and trial.results is None


# --- the search on data ------------------------------------------------------------------


def test_airline_differencing_search_is_no_worse_than_the_airline_model(
        airline_differencing_selection):
    chosen = airline_differencing_selection.chosen
    # Same d = 1, D = 1 as the airline model (Box & Jenkins 1976), so the AICc compare.
    assert (chosen.spec.order[1], chosen.spec.seasonal[1]) == (1, 1)
    assert chosen.score <= AIRLINE_AICC + 2 * LOGLIK_TOLERANCE


def test_chosen_aicc_is_the_small_sample_corrected_aic(airline_differencing_selection):
    # Hurvich & Tsai (1989): AICc = AIC + 2K(K+1)/(N-K-1), K counting sigma^2, N the
    # observations left after differencing.
    results = airline_differencing_selection.chosen.results
    k, n = len(results.params), results.nobs_effective
    assert n == 144 - 13
    assert results.aicc == pytest.approx(results.aic + 2 * k * (k + 1) / (n - k - 1))


def test_series_g_search_records_the_chosen_model_in_the_parameters(series_g_fit,
                                                                    log_series_g):
    fit, caught = series_g_fit
    spec, estimates = parse({"family": "arima_search"}).chosen(fit.params)
    assert (spec.order[1], spec.seasonal[1], spec.period) == (0, 1, 12)
    assert spec.deterministic == "drift"  # d + D = 1
    assert fit.params["search.score"] == pytest.approx(fit.raw.aicc)
    assert fit.params["search.fitted"] <= 40 + 1
    assert set(estimates) == {"drift", *fit.raw.model.param_names[1:]}
    assert not any(issubclass(w.category, ConvergenceWarning) for w in caught)
    # statsmodels' own roots of the expanded AR and MA polynomials: all inverse roots lie
    # inside the rejection radius.
    inverse = [abs(1 / r) for r in (*fit.raw.arroots, *fit.raw.maroots)]
    assert max(inverse) <= MAX_INVERSE_ROOT


def test_forecast_with_recorded_parameters_reproduces_the_fitted_model(series_g_fit,
                                                                       log_series_g):
    fit, _ = series_g_fit
    spec = parse({"family": "arima_search"})
    forecast = spec.forecast(log_series_g, 12, fit.params, 12, (95,), seed=0)
    expected = fit.raw.get_forecast(12)
    assert np.allclose(forecast.mean, expected.predicted_mean, rtol=0, atol=1e-9)
    bounds = np.asarray(expected.conf_int(alpha=0.05))
    assert np.allclose(forecast.lower[95], bounds[:, 0], rtol=0, atol=1e-9)


def test_forecast_stretch_with_kept_parameters_matches_single_forecasts(arma_fit,
                                                                        arma_series):
    fit, _ = arma_fit
    spec = parse({"family": "arima_search"})
    ends = [180, 200]
    stretch = spec.forecast_stretch(arma_series, 1, fit.params, ends, 6, (80,), [0, 1])
    for end, forecast in zip(ends, stretch, strict=True):
        single = spec.forecast(arma_series[:end], 1, fit.params, 6, (80,), 0)
        assert np.allclose(forecast.mean, single.mean)


def test_simulated_arma11_gets_an_order_as_good_as_the_true_one(arma_fit, arma_series):
    fit, _ = arma_fit
    spec, _ = parse({"family": "arima_search"}).chosen(fit.params)
    assert spec.order[1] == 0 and spec.seasonal is None
    assert spec.deterministic == "constant"  # the simulated mean is 5
    # The true order, fitted directly with statsmodels; AICc gaps under 2 are not
    # meaningful (Burnham & Anderson 2002, recalled, not checked against the source).
    true_aicc = ARIMA(arma_series, order=(1, 0, 1), trend="c").fit().aicc
    assert fit.params["search.score"] <= true_aicc + 2.0


def test_fit_never_sees_data_after_the_origin(arma_series):
    # fit(y, m) receives the training window only; changing every value after the origin
    # leaves the choice and the estimates at that origin unchanged.
    origin = 150
    altered = arma_series.copy()
    altered[origin:] = 100.0 + 10.0 * arma_series[origin:]
    spec = parse({"family": "arima_search", "seasonal": False})
    before, _ = fit_recording(spec, arma_series[:origin], 1)
    after, _ = fit_recording(spec, altered[:origin], 1)
    assert before.params == after.params
    assert before.raw.nobs == origin
    seeing_all, _ = fit_recording(spec, altered, 1)
    assert seeing_all.params != before.params


def test_a_budget_of_four_models_screens_only_the_starting_orders(arma_series):
    selection = search_orders(arma_series, 1, 0, 0, OrderLimits(), "aicc", 4)
    assert len(selection.trials) == 4
    assert selection.summary()["search.fitted"] == 4.0


# --- the spec ----------------------------------------------------------------------------


def test_defaults_fill_the_canonical_body_and_the_label():
    spec = parse({"family": "arima_search", "max_order": {"p": 1}, "transform": "log"})
    assert spec.body() == {
        "max_order": {"p": 1, "d": 2, "q": 3, "P": 1, "D": 1, "Q": 1}, "seasonal": True,
        "criterion": "aicc", "max_models": 40, "period": None,
        "transform": {"kind": "log", "lambda": None}}
    assert spec.label(12) == "ARIMA by AICc, m=12, ≤(1,2,3)×(1,1,1), log"
    assert parse({"family": "arima_search", "seasonal": False}).label(12) == (
        "ARIMA by AICc, no season")
    assert parse({"family": "arima_search", "criterion": "bic"}).label(1) == "ARIMA by BIC"


def test_registered_family_parses_through_the_candidate_list():
    candidate = parse_candidate({"family": "arima_search", "period": 4})
    assert isinstance(candidate.spec, ArimaSearchSpec)
    assert candidate.label(12) == "ARIMA by AICc, m=4"


def test_min_train_fits_the_simplest_model_with_the_most_differencing():
    # (0,2,0)×(0,1,0), season 12: 2 + 12 differences, sigma^2, two spare observations.
    assert parse({"family": "arima_search"}).min_train(12) == 2 + 12 + 1 + 2
    assert parse({"family": "arima_search", "seasonal": False}).min_train(12) == 2 + 1 + 2


@pytest.mark.parametrize(("body", "message"), [
    ({"orders": [1, 1, 1]}, "unknown field"),
    ({"max_order": [3, 2, 3]}, "max_order must be an object"),
    ({"max_order": {"r": 1}}, "unknown order"),
    ({"max_order": {"p": 6}}, "max_order p must be an integer from 0 to 5"),
    ({"max_order": {"D": 2}}, "max_order D must be an integer from 0 to 1"),
    ({"max_order": {"q": -1}}, "max_order q"),
    ({"max_order": {"P": True}}, "max_order P"),
    ({"seasonal": "yes"}, "seasonal must be true or false"),
    ({"criterion": "hqic"}, "criterion must be one of"),
    ({"max_models": 3}, "at least 4"),
    ({"max_models": 201}, "max_models must be an integer from 0 to 200"),
    ({"period": 1}, "period must be an integer of at least 2"),
    ({"seasonal": False, "period": 12}, "a period needs"),
    ({"transform": "sqrt"}, "transform"),
])
def test_bad_spec_fields_are_rejected(body, message):
    with pytest.raises(CandidateError, match=message):
        parse({"family": "arima_search", **body})


def test_thresholds_are_spec_fields_that_keep_older_ids():
    default = parse_candidate({"family": "arima_search"})
    spelled = parse_candidate({"family": "arima_search", "seasonal_strength_threshold": 0.64,
                               "max_inverse_root": 0.99})
    changed = parse({"family": "arima_search", "seasonal_strength_threshold": 0.5,
                     "max_inverse_root": 0.98})
    assert spelled.id == default.id and "max_inverse_root" not in default.spec.body()
    assert changed.body()["seasonal_strength_threshold"] == 0.5
    assert changed.body()["max_inverse_root"] == 0.98
    assert changed.label(12).endswith("F_S≥0.5, root≤0.98")
    for field, bad in (("seasonal_strength_threshold", 1.5), ("max_inverse_root", "0.9"),
                       ("max_inverse_root", True)):
        with pytest.raises(CandidateError, match=field):
            parse({"family": "arima_search", field: bad})


def test_the_strength_threshold_decides_the_seasonal_difference(log_series_g):
    strength = choose_differencing(log_series_g, 12, 2, 1).seasonal_strength
    above = choose_differencing(log_series_g, 12, 2, 1, threshold=min(1.0, strength + 0.01))
    assert above.seasonal_d == 0
    assert choose_differencing(log_series_g, 12, 2, 1, threshold=strength).seasonal_d == 1


def test_the_root_limit_decides_the_verdict():
    w = np.diff(np.random.default_rng(1).standard_normal(150))  # as in the test above
    strict = run_trial(ArimaSpec((0, 0, 1)), w, 1, "aicc")
    loose = run_trial(ArimaSpec((0, 0, 1)), w, 1, "aicc", root_limit=1.0)
    assert strict.verdict == "near_unit_root" and loose.verdict == "accepted"
    assert abs(loose.results.maparams[0]) <= 1.0
