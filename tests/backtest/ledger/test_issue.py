"""Issuing a forecast: the engine's model on all data, checked against statsmodels itself."""

import numpy as np
import pytest
from scipy import stats
from statsmodels.tsa.arima.model import ARIMA

from backtest.candidates import parse_candidate
from backtest.ledger import IssuedForecast, LedgerError, issue_forecast
from backtest.series import make_series
from backtest.software import software_versions

AIRLINE_LOG = {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
               "transform": "log"}


def monthly(values, key="sku", m=12):
    rows = [(f"{2000 + i // 12}-{i % 12 + 1:02d}", v) for i, v in enumerate(values)]
    return make_series(key, "P1M", rows, season_length=m)


@pytest.fixture(scope="module")
def air(series_g):
    return make_series("air", "P1M", zip(series_g.month, series_g.iloc[:, 1]))


@pytest.fixture(scope="module")
def issued_air(air):
    return issue_forecast(air, parse_candidate(AIRLINE_LOG), horizon=6, levels=(95, 80))


def test_airline_forecast_equals_statsmodels_own_forecast(issued_air, log_air):
    # Reference: statsmodels fitting the same model to log Series G (Box & Jenkins 1976)
    # directly, forecasts taken back by exp (the engine's transform handling).
    reference = ARIMA(log_air, order=(0, 1, 1), seasonal_order=(0, 1, 1, 12)).fit()
    prediction = reference.get_forecast(6)
    np.testing.assert_allclose(issued_air.point, np.exp(prediction.predicted_mean), rtol=1e-6)
    for level in (80, 95):
        bounds = np.exp(prediction.conf_int(alpha=1 - level / 100))
        np.testing.assert_allclose(issued_air.lower[level], bounds[:, 0], rtol=1e-6)
        np.testing.assert_allclose(issued_air.upper[level], bounds[:, 1], rtol=1e-6)
    # Log-scale point forecast for January 1961: 6.110185 at the published exact-ML
    # estimates (Box & Jenkins 1976 as widely reproduced, recalled; forecast computed with
    # statsmodels 0.15.0); 5e-5 is what the optimiser's stopping point can move it.
    assert np.log(issued_air.point[0]) == pytest.approx(6.110185, abs=5e-5)
    assert issued_air.params["ma.L1"] == pytest.approx(reference.params[0], abs=1e-6)


def test_record_names_its_data_model_and_software(issued_air, air, series_g):
    values = series_g.iloc[:, 1].to_numpy(float)
    assert issued_air.origin == "1960-12"
    assert issued_air.periods == ("1961-01", "1961-02", "1961-03", "1961-04", "1961-05",
                                  "1961-06")
    assert issued_air.horizon == 6
    assert issued_air.levels == (80, 95)
    assert issued_air.fingerprint == air.fingerprint()
    assert issued_air.candidate_spec == parse_candidate(AIRLINE_LOG).canonical
    assert issued_air.label == "ARIMA(0,1,1)×(0,1,1), m=12, log"
    assert issued_air.scale == pytest.approx(np.mean(np.abs(values[12:] - values[:-12])))
    assert issued_air.scale_sq == pytest.approx(np.mean(np.diff(values) ** 2))
    assert issued_air.software == software_versions()


def test_record_round_trips_through_json_form(issued_air):
    assert IssuedForecast.from_dict(issued_air.to_dict()) == issued_air


def test_naive_intervals_widen_with_the_square_root_of_the_horizon():
    issued = issue_forecast(monthly([10.0, 12, 11, 13, 12, 14], m=1),
                            parse_candidate({"family": "benchmark", "method": "naive"}),
                            horizon=4, levels=(90,))
    s = np.sqrt(np.mean(np.diff([10.0, 12, 11, 13, 12, 14]) ** 2))  # naive residual scale
    half = stats.norm.ppf(0.95) * s * np.sqrt([1, 2, 3, 4])
    np.testing.assert_allclose(issued.upper[90], 14 + half)
    np.testing.assert_allclose(issued.lower[90], 14 - half)


def test_fit_warnings_are_recorded_not_raised():
    noise = np.random.default_rng(1).normal(size=14)
    issued = issue_forecast(monthly(noise, m=1),
                            parse_candidate({"family": "arima", "order": [3, 0, 3]}),
                            horizon=2)
    assert any(w.startswith("ConvergenceWarning") for w in issued.warnings)


@pytest.mark.parametrize(("options", "message"), [
    ({"horizon": 0}, "horizon must be an integer from 1"),
    ({"horizon": True}, "horizon must be an integer from 1"),
    ({"horizon": 2, "levels": ()}, "levels must be a non-empty list"),
    ({"horizon": 2, "levels": (80, 100)}, "each level must be an integer from 1 to 99"),
    ({"horizon": 2, "levels": (80, 80)}, "levels must not repeat"),
    ({"horizon": 2, "seed": 1.5}, "seed must be an integer"),
])
def test_bad_horizon_or_levels_are_refused(options, message):
    series = monthly([5.0, 6, 7, 6, 8], m=1)
    with pytest.raises(LedgerError, match=message):
        issue_forecast(series, parse_candidate({"family": "benchmark", "method": "naive"}),
                       **options)


@pytest.mark.parametrize(("values", "m", "spec", "message"), [
    ([1.0, 2, 3], 12, AIRLINE_LOG, "has 3 observations; ARIMA.* needs at least 31"),
    ([1.0, 2, -3, 4, 5, 6], 1, {"family": "arima", "order": [0, 1, 0], "transform": "log"},
     "needs strictly positive data, but series 'sku' has -3 at period 2000-03"),
    ([1.0, 2, 3, 4, 5, 6], 1, {"family": "arima", "order": [0, 1, 0],
                                "seasonal": {"order": [0, 1, 0]}}, "period of at least 2"),
    ([4.0] * 6, 1, {"family": "benchmark", "method": "naive"}, "MASE scale .* zero"),
    ([1.0, 2, 4, 8, 16, 32, 64, 128], 1,
     {"family": "arima", "order": [0, 1, 0], "deterministic": "drift",
      "transform": {"kind": "boxcox", "lambda": -2}},
     "could not be fitted .*point forecast contains non-finite values"),
])
def test_impossible_candidates_are_refused_with_the_reason(values, m, spec, message):
    with pytest.raises(LedgerError, match=message):
        issue_forecast(monthly(values, m=m), parse_candidate(spec), horizon=3)
