"""The fast ETS estimator: its likelihood and gradient are statsmodels', its start values
and bounds are the reference path's, its optimum is at least the reference optimum, and
folds record the estimator."""

import warnings

import numpy as np
import pytest
from statsmodels.tsa.exponential_smoothing.ets import ETSModel
from statsmodels.tsa.exponential_smoothing.initialization import (
    _initialization_heuristic,
    _initialization_simple,
)

from backtest.candidates import parse_candidate
from backtest.folds import plan_origins
from backtest.models import fast_ets_kernel as kernel
from backtest.models.ets import EtsSpec
from backtest.models.fast_ets import EtsClass, fast_estimate, fast_fit, fast_loglike, start_values
from backtest.models.fast_fallback import EstimatorFallback
from backtest.plan import parse_plan
from backtest.runner import run_candidate
from backtest.series import make_series
from tests.backtest.fast_ets_corpus import _ets, corpus, origins, reference_loglike

#: Log-likelihood the fast optimum may lose against the reference optimum.
LOGLIKE_TOLERANCE = 1e-6
CLASSES = [f"{e}{t}{s}" for e in "AM" for t in ("N", "A", "Ad") for s in "NAM"]


@pytest.fixture(scope="module")
def g(series_g):
    return series_g.iloc[:, 1].to_numpy(float)


@pytest.mark.parametrize("code", CLASSES)
def test_likelihood_equals_statsmodels(g, code):
    """At the fast optimum and at a point away from it, to 1e-8 relative (computed with
    statsmodels 0.15, ``ETSModel.loglike``); parameter names are statsmodels'."""
    spec = _ets(code)
    model = spec.model(g, 12)
    estimate = fast_estimate(spec, g, 12)
    assert list(estimate.params) == model.param_names
    moved = {k: (0.7 * v if k.startswith(("smoothing", "damping")) else 1.01 * v)
             for k, v in estimate.params.items()}
    for params in (estimate.params, moved):
        expected = model.loglike(np.array([params[n] for n in model.param_names]))
        assert fast_loglike(spec, g, 12, params) == pytest.approx(expected, rel=1e-8)
    assert estimate.llf == pytest.approx(reference_loglike(spec, g, 12, estimate.params),
                                         rel=1e-8)


@pytest.mark.parametrize("code", ["AAdA", "MAdM", "MNA", "AAN"])
def test_gradient_equals_central_differences(g, code):
    """The forward-mode gradient against central differences of statsmodels' likelihood
    (step 1e-6 relative; agreement to 1e-5 relative is what the differences allow)."""
    spec = _ets(code)
    form = EtsClass.of(spec, 12)
    theta = form.internal(start_values(g, form))
    theta[kernel.ALPHA] = 0.35  # away from the start, inside every bound
    free = form.free
    gradient = np.empty(len(free))
    kernel.loglike_gradient(theta, g, form.m, form.multiplicative_error, form.season == "mul",
                            free, gradient)
    model = spec.model(g, 12)

    def loglike(t):
        return model.loglike(np.array([form.named(t)[n] for n in model.param_names]))

    for j, index in enumerate(free):
        step = 1e-6 * max(1.0, abs(theta[index]))
        up, down = theta.copy(), theta.copy()
        up[index] += step
        down[index] -= step
        numeric = (loglike(up) - loglike(down)) / (2 * step)
        assert gradient[j] == pytest.approx(numeric, rel=1e-5, abs=1e-4), (code, index)


@pytest.mark.parametrize(("code", "n"), [("AAA", 144), ("MAdM", 144), ("MNA", 30),
                                         ("AAdN", 144), ("MNN", 8), ("ANM", 61)])
def test_start_values_are_statsmodels_bit_for_bit(g, code, n):
    """The start values statsmodels' ETSModel optimises from (statsmodels 0.15:
    ``ETSModel.start_params`` after building the model), to the last bit, with the
    heuristic and, on a short window, the simple initial states; and the two rules'
    initial level, compared directly with statsmodels' functions."""
    spec = _ets(code)
    model = spec.model(g[:n], 12)
    ours = start_values(g[:n], EtsClass.of(spec, 12))
    assert np.array_equal([ours[k] for k in model.param_names], model.start_params)
    trend, season = ("add" if spec.trend != "none" else None,
                     {"none": None, "additive": "add", "multiplicative": "mul"}[spec.season])
    rule = _initialization_heuristic if n >= 10 + 2 * (12 // 2) else _initialization_simple
    level, *_ = rule(g[:n], trend=trend, seasonal=season,
                     seasonal_periods=12 if season else 1)
    assert ours["initial_level"] == level


@pytest.fixture(scope="module")
def ci_corpus():
    return corpus("ci")


def test_optimum_is_at_least_the_reference_optimum(ci_corpus):
    """Every fold of the CI corpus: the fast estimate's likelihood, evaluated by
    statsmodels, is at least the reference estimate's minus LOGLIKE_TOLERANCE (the
    estimator replays the reference's search, so it is at least the reference's to
    rounding)."""
    folds = 0
    for item in ci_corpus:
        for spec in item.specs:
            for end in origins(item, spec, 3):
                y, m = item.values[:end], item.season_length
                fast = fast_estimate(spec, y, m)
                assert fast.converged, (item.name, spec, end)
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore")  # the reference's own convergence notes
                    reference = spec.reference_fit(y, m)
                gap = (reference_loglike(spec, y, m, fast.params)
                       - reference_loglike(spec, y, m, reference.params))
                assert gap >= -LOGLIKE_TOLERANCE, (item.name, spec, end, gap)
                folds += 1
    assert folds >= 25


def test_bounds_are_the_reference_bounds(g):
    """The estimates respect statsmodels' bounds: 1e-4 <= alpha, beta / alpha,
    gamma / (1 - alpha) <= 1 - 1e-4 and 0.8 <= phi <= 0.98 (its ``_setup_bounds``), and the
    last seasonal state is fixed."""
    for code in ("AAdA", "MAdM"):
        p = fast_estimate(_ets(code), g[:100], 12).params
        alpha = p["smoothing_level"]
        assert 1e-4 <= alpha <= 1 - 1e-4
        assert 1e-4 - 1e-15 <= p["smoothing_trend"] / alpha <= 1 - 1e-4 + 1e-15
        assert 1e-4 - 1e-15 <= p["smoothing_seasonal"] / (1 - alpha) <= 1 - 1e-4 + 1e-15
        assert 0.8 <= p["damping_trend"] <= 0.98
        assert p["initial_seasonal.11"] == (1.0 if code == "MAdM" else 0.0)


@pytest.fixture(scope="module")
def monthly(g):
    return make_series("g", "P1M", [(f"{1949 + i // 12}-{i % 12 + 1:02d}", v)
                                    for i, v in enumerate(g)])


@pytest.mark.parametrize("body", [
    {"family": "ets", "error": "multiplicative", "trend": "additive",
     "season": "multiplicative"},
    {"family": "ets", "error": "additive", "trend": "damped", "season": "additive",
     "transform": "log"}])
def test_folds_record_the_fast_estimator_and_forecast_with_the_reference_path(monthly, body):
    candidate = parse_candidate(body)
    plan = parse_plan({"horizon": 3, "max_origins": 4, "refit": 2, "estimator": "fast",
                       "assessment": "lean"})
    folds = run_candidate(monthly, candidate, plan, plan_origins(monthly, plan, 40))
    assert [f.status for f in folds] == ["ok"] * 4
    assert all(f.params["estimator"] == 1.0 for f in folds)
    assert not any("EstimatorFallback" in w for f in folds for w in f.warnings)
    spec = candidate.spec
    y = spec.transform.forward(np.asarray(monthly.values, dtype=float))
    for fold in folds:
        # the point forecast does not depend on the simulation seed
        expected = spec.forecast(y[:fold.train_size], 12, fold.params, 3, (80, 95), 0)
        got = spec.transform.forward(np.asarray(fold.point))
        assert np.allclose(got, expected.mean, rtol=1e-10)
    first = fast_estimate(spec, y[:folds[0].train_size], 12).params
    assert all(folds[0].params[k] == v for k, v in first.items())


def test_a_failing_fast_estimate_falls_back_with_its_reason():
    spec = EtsSpec("additive", "none", "none")
    flat = np.full(40, 3.0)  # nothing to fit: the errors vanish, the likelihood is unbounded
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        fit = fast_fit(spec, flat, 1, None, keep_raw=False)
    fallbacks = [w for w in caught if issubclass(w.category, EstimatorFallback)]
    assert len(fallbacks) == 1
    message = str(fallbacks[0].message)
    assert message.startswith("fast estimator failed (") and "reference estimator" in message
    assert fit.params["estimator"] == 0.0
    reference = ETSModel(flat, error="add")
    assert set(fit.params) - {"estimator"} == set(reference.param_names)


def test_a_fast_fit_keeps_statsmodels_results_for_the_assessment(g):
    spec = _ets("AAdN")
    fit = spec.fit(g, 12, estimator="fast")
    assert fit.converged is True
    assert fit.raw.mle_retvals["converged"] is True
    assert fit.raw.llf == pytest.approx(fast_estimate(spec, g, 12).llf, rel=1e-12)
    assessed_spec, assessed = spec.assessed(fit)
    assert "estimator" not in assessed.params and assessed_spec is spec
