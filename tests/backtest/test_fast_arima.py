"""The fast ARIMA estimator: its likelihood is statsmodels', its optimum is at least the
reference path's, and the plan's estimator is recorded with every fold."""

import math
import warnings

import numpy as np
import pytest
from scipy.linalg import cho_factor, cho_solve, solve_discrete_lyapunov, toeplitz
from statsmodels.datasets import co2
from statsmodels.tsa.arima_process import arma_acovf
from statsmodels.tsa.statespace.tools import constrain_stationary_univariate

from backtest.candidates import parse_candidate, parse_candidates
from backtest.engine import run_backtest
from backtest.errors import PlanError
from backtest.folds import plan_origins
from backtest.models import fast_arima_kernel as kernel
from backtest.models.arima import ArimaSpec
from backtest.models.arima_search import ArimaSearchSpec
from backtest.models.fast_arima import fast_estimate, fast_fit, fast_loglike
from backtest.models.fast_arima_trial import information_criterion
from backtest.models.fast_fallback import EstimatorFallback
from backtest.plan import parse_plan
from backtest.runner import run_candidate
from backtest.series import make_series
from tests.backtest.fast_arima_corpus import corpus, exact_loglike, origins

#: Log-likelihood the fast optimum may lose against the reference optimum.
LOGLIKE_TOLERANCE = 1e-6


def test_monahan_map_is_statsmodels():
    # computed with statsmodels 0.15 (constrain_stationary_univariate)
    x = np.array([0.7, -1.2, 0.3, 2.5])
    assert np.allclose(kernel.constrain(x), constrain_stationary_univariate(x), rtol=1e-14)


@pytest.mark.parametrize(("ar", "ma"), [
    ([0.5, -0.3], [0.4]), ([], [-0.4] + [0.0] * 10 + [-0.55, 0.22]),
    ([0.9] + [0.0] * 10 + [0.5, -0.45], [0.3, 0.1])])
def test_stationary_covariance_solves_the_lyapunov_equation(ar, ma):
    # reference: scipy.linalg.solve_discrete_lyapunov (scipy 1.17) on Harvey's state
    r = max(len(ar), len(ma) + 1)
    phi, loading = np.zeros(r), np.zeros(r)
    phi[:len(ar)], loading[0], loading[1:len(ma) + 1] = ar, 1.0, ma
    transition = np.zeros((r, r))
    transition[:, 0], transition[:-1, 1:] = phi, np.eye(r - 1)
    expected = solve_discrete_lyapunov(transition, np.outer(loading, loading))
    assert np.allclose(kernel.stationary_cov(phi, loading), expected, rtol=1e-10, atol=1e-12)


@pytest.mark.parametrize(("ar", "ma"), [
    ([0.5, -0.3], [0.4]), ([], [-0.4] + [0.0] * 10 + [-0.55, 0.22]),
    ([0.9] + [0.0] * 10 + [0.5, -0.45], [0.3, 0.1]), ([0.97], [-0.9])])
def test_the_filter_sums_are_the_exact_gaussian_ones(ar, ma):
    # reference: the exact likelihood's two terms from the whole covariance matrix of the
    # series, Sigma = Toeplitz(autocovariances) (statsmodels 0.15 arma_acovf), by a
    # Cholesky factorisation (scipy 1.17): log det Sigma and w' Sigma^-1 w
    w = np.random.default_rng(11).normal(size=90)
    sum_log_f, s_ww, _, _ = kernel.filter_sums(w, np.zeros_like(w), np.array(ar, dtype=float),
                                               np.array(ma, dtype=float))
    factor = cho_factor(toeplitz(arma_acovf(np.r_[1.0, -np.array(ar)], np.r_[1.0, ma],
                                            nobs=len(w))), lower=True)
    assert sum_log_f == pytest.approx(2 * np.sum(np.log(np.diag(factor[0]))), rel=1e-10)
    assert s_ww == pytest.approx(w @ cho_solve(factor, w), rel=1e-10)


@pytest.fixture(scope="module")
def ci_corpus():
    return corpus("ci")


def test_likelihood_equals_statsmodels(ci_corpus):
    """At the fast optimum and at a point away from it, to 1e-8 relative (computed with
    statsmodels 0.15, SARIMAX with simple differencing)."""
    for item in ci_corpus:
        for spec in item.specs:
            y = item.values
            estimate = fast_estimate(spec, y, item.season_length)
            moved = {k: (0.8 * v if k.startswith(("ar", "ma")) else 1.3 * v)
                     for k, v in estimate.params.items()}
            for params in (estimate.params, moved):
                expected = exact_loglike(spec, y, params)
                got = fast_loglike(spec, y, item.season_length, params)
                assert got == pytest.approx(expected, rel=1e-8), (item.name, spec)
            assert estimate.llf == pytest.approx(exact_loglike(spec, y, estimate.params),
                                                 rel=1e-8)


def test_optimum_is_at_least_the_reference_optimum(ci_corpus):
    """Every fold of the CI corpus: the fast estimate's likelihood, evaluated by
    statsmodels, is at least the reference estimate's minus LOGLIKE_TOLERANCE."""
    folds = 0
    for item in ci_corpus:
        for spec in item.specs:
            for end in origins(item, spec, 3):
                y = item.values[:end]
                fast = fast_estimate(spec, y, item.season_length)
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore")  # the reference's own convergence notes
                    reference = spec.reference_fit(y, item.season_length)
                gap = (exact_loglike(spec, y, fast.params)
                       - exact_loglike(spec, y, reference.params))
                assert gap >= -LOGLIKE_TOLERANCE, (item.name, spec, end, gap)
                folds += 1
    assert folds >= 15


def test_airline_estimates_match_the_published_values(series_g):
    # Box & Jenkins (1976), Series G airline model on logs: theta = -0.4018,
    # Theta = -0.5569 (recalled); checked at the four decimals published.
    y = np.log(series_g.iloc[:, 1].to_numpy(float))
    estimate = fast_estimate(ArimaSpec((0, 1, 1), (0, 1, 1), 12), y, 12)
    assert estimate.converged
    assert round(estimate.params["ma.L1"], 4) == -0.4018
    assert round(estimate.params["ma.S.L12"], 4) == -0.5569


def test_estimator_is_a_plan_field_recorded_in_the_canonical_plan():
    assert parse_plan({"horizon": 2}).canonical()["estimator"] == "fast"
    reference = parse_plan({"horizon": 2, "estimator": "reference"})
    assert reference.canonical()["estimator"] == "reference"
    with pytest.raises(PlanError, match="estimator must be one of fast, reference"):
        parse_plan({"horizon": 2, "estimator": "quick"})


@pytest.fixture(scope="module")
def airline(series_g):
    values = series_g.iloc[:, 1].to_numpy(float)
    return make_series("g", "P1M", [(f"{1949 + i // 12}-{i % 12 + 1:02d}", v)
                                    for i, v in enumerate(values)])


def test_folds_record_the_fast_estimator_and_forecast_with_the_reference_path(airline):
    candidate = parse_candidate({"family": "arima", "order": [0, 1, 1],
                                 "seasonal": {"order": [0, 1, 1]}, "transform": "log"})
    plan = parse_plan({"horizon": 3, "max_origins": 4, "refit": 2, "estimator": "fast"})
    folds = run_candidate(airline, candidate, plan, plan_origins(airline, plan, 40))
    assert [f.status for f in folds] == ["ok"] * 4
    assert all(f.params["estimator"] == 1.0 for f in folds)
    assert not any("EstimatorFallback" in w for f in folds for w in f.warnings)
    y = np.log(np.asarray(airline.values, dtype=float))
    spec = candidate.spec
    for fold in folds:
        end = fold.train_size
        expected = spec.forecast(y[:end], 12, fold.params, 3, (80, 95), 0)
        assert np.allclose(np.log(fold.point), expected.mean, rtol=1e-10)
        assert np.allclose(np.log(fold.upper[95]), expected.upper[95], rtol=1e-10)
    full = fast_estimate(spec, y[:folds[0].train_size], 12).params
    assert all(folds[0].params[k] == v for k, v in full.items())


def test_a_failing_fast_estimate_falls_back_with_its_reason():
    spec = ArimaSpec((1, 1, 0))
    flat = np.full(40, 3.0)  # nothing to fit: the innovation variance would be zero
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        fit = fast_fit(spec, flat, 1, None, keep_raw=False)
    fallbacks = [w for w in caught if issubclass(w.category, EstimatorFallback)]
    assert len(fallbacks) == 1
    assert "fast estimator failed" in str(fallbacks[0].message)
    assert fit.params["estimator"] == 0.0


def test_fast_search_scores_models_as_statsmodels_does(series_g):
    y = np.log(series_g.iloc[:, 1].to_numpy(float))[:120]
    fit = ArimaSearchSpec().fit(y, 12, estimator="fast")
    assert fit.params["estimator"] == 1.0
    spec, estimates = ArimaSearchSpec().chosen(fit.params)
    # the criterion of the chosen model against statsmodels' AICc at the same estimates
    # (its reference model; the likelihoods differ by the approximate-diffuse start)
    assert fit.params["search.score"] == pytest.approx(fit.raw.aicc, rel=1e-6)
    estimate = fast_estimate(spec, y, 12)
    assert information_criterion(estimate, "aicc") <= fit.params["search.score"] + 1e-9
    assert math.isfinite(fit.params["search.score"])


def test_a_run_records_the_estimator_in_its_plan_and_diagnoses_the_fast_fit(airline):
    candidates = parse_candidates([{"family": "arima", "order": [0, 1, 1],
                                    "seasonal": {"order": [0, 1, 1]}, "transform": "log"}])
    plan = parse_plan({"horizon": 3, "max_origins": 2, "estimator": "fast"})
    result = run_backtest([airline], candidates, plan)
    assert result.plan["estimator"] == "fast"
    arima = candidates[0].id
    report = result.series[0].evidence["diagnostics"][arima]
    assert report["estimation"]["converged"] is True
    y = np.log(np.asarray(airline.values, dtype=float))
    full = fast_estimate(candidates[0].spec, y, 12)
    rows = {row["name"]: row for row in report["coefficients"]}
    assert set(rows) == {"ma.L1", "ma.S.L12", "sigma2"}
    assert rows["ma.L1"]["estimate"] == pytest.approx(full.params["ma.L1"], rel=1e-12)
    assert rows["ma.L1"]["std_error"] > 0
    assert all(f.params["estimator"] == 1.0 for f in result.series[0].folds
               if f.candidate_id == arima)


@pytest.fixture(scope="module")
def log_co2():
    """Mauna Loa CO2 (statsmodels' ``co2``, weekly, ppm) as monthly means, logged, first
    490 months: the differenced spread is far below 1e-2."""
    weekly = co2.load_pandas().data["co2"]
    return np.log(weekly.resample("MS").mean().interpolate().to_numpy(float))[:490]


def test_the_fast_estimator_rescales_extreme_data_as_the_reference_does(log_co2):
    """The reference path's rule (a power of two where the scale is extreme, undone
    exactly) holds for the fast estimator: the factor is the reference's, the likelihood is
    the original data's at the returned parameters, the same data in other units give the
    same coefficients bit for bit with the variance scaled exactly, and the optimum is at
    least the (rescaled) reference estimate's, through the objective."""
    spec = ArimaSpec((0, 1, 1), (0, 1, 1))
    factor = spec.rescaling(log_co2, 12)
    assert factor > 1
    estimate = fast_estimate(spec, log_co2, 12)
    assert estimate.rescaled_by == factor and estimate.converged
    assert estimate.llf == pytest.approx(fast_loglike(spec, log_co2, 12, estimate.params),
                                         abs=1e-8)
    # times 8 (a power of two): the rescaled data are the same numbers, so is the search
    other = fast_estimate(spec, log_co2 * 8.0, 12)
    assert other.rescaled_by == factor / 8.0
    for name in ("ma.L1", "ma.S.L12"):
        assert other.params[name] == estimate.params[name]
    assert other.params["sigma2"] == estimate.params["sigma2"] * 64.0
    assert other.llf == pytest.approx(estimate.llf - estimate.nobs * math.log(8.0), abs=1e-8)
    fit = spec.fit(log_co2, 12, estimator="fast")
    reference = spec.fit(log_co2, 12)
    assert fit.params["estimator"] == 1.0 and fit.converged is True
    assert fit.rescaled_by == reference.rescaled_by == factor
    assert fast_loglike(spec, log_co2, 12, reference.params) <= estimate.llf + LOGLIKE_TOLERANCE
