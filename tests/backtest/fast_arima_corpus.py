"""Validation corpus of the fast ARIMA estimator: series, models and origins.

Used by ``tests/backtest/test_fast_arima.py`` (a CI-sized part) and
``bench/fast_arima_bench.py`` (at least 500 re-estimated folds over at least 20 series).
Series: Series G (Box & Jenkins 1976, from ``tests/data``), open datasets statsmodels
ships (Nile, sunspots, macrodata, CO2, El Niño), and ARIMA series generated with known
parameters (seeded). Transforms: none, log and Box-Cox; deterministic terms: none,
constant and drift.

Each fold is judged on the exact likelihood of the differenced series as statsmodels'
``SARIMAX(..., simple_differencing=True)`` computes it: the fast estimator maximises that
likelihood, the reference path (statsmodels ``ARIMA``) an approximation of it with the
differenced states started at variance 1e6.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import statsmodels.api as sm
from statsmodels.tsa.arima_process import arma_generate_sample
from statsmodels.tsa.statespace.sarimax import SARIMAX

from backtest.models.arima import ArimaSpec
from backtest.models.base import Params
from backtest.transforms import Transform

DATA = Path(__file__).resolve().parents[1] / "data"


@dataclass(frozen=True)
class CorpusSeries:
    """A named series (already transformed), its season length and the models fitted."""

    name: str
    values: np.ndarray
    season_length: int
    specs: tuple[ArimaSpec, ...]


def _airline(period: int = 12) -> ArimaSpec:
    return ArimaSpec((0, 1, 1), (0, 1, 1), period)


def _generated(seed: int, ar: list[float], ma: list[float], n: int, d: int,
               drift: float = 0.0, level: float = 0.0) -> np.ndarray:
    """An ARIMA series with known coefficients: ARMA noise, integrated d times, plus a
    drift per step (``d = 1``) or a level (``d = 0``)."""
    rng = np.random.default_rng(seed)
    noise = arma_generate_sample(np.r_[1.0, -np.asarray(ar)], np.r_[1.0, np.asarray(ma)], n,
                                 distrvs=rng.standard_normal, burnin=100)
    x = noise + (drift if d == 1 else 0.0)
    for _ in range(d):
        x = np.cumsum(x)
    return x + level


def corpus(size: str = "ci") -> list[CorpusSeries]:
    """The corpus: ``"ci"`` (a few series) or ``"full"`` (at least 20 series)."""
    g = pd.read_csv(DATA / "series_g.csv").iloc[:, 1].to_numpy(float)
    log, boxcox = Transform("log"), Transform("boxcox", 0.5)
    nile = sm.datasets.nile.load_pandas().data["volume"].to_numpy(float)
    sunspots = sm.datasets.sunspots.load_pandas().data["SUNACTIVITY"].to_numpy(float)
    macro = sm.datasets.macrodata.load_pandas().data
    items = [
        CorpusSeries("Series G, log", log.forward(g), 12,
                     (_airline(), ArimaSpec((1, 0, 0), (0, 1, 1), 12, "drift"))),
        CorpusSeries("Nile", nile, 1, (ArimaSpec((1, 0, 1), None, None, "constant"),
                                       ArimaSpec((0, 1, 1)))),
        CorpusSeries("generated ARIMA(1,1,1) drift", _generated(1, [0.5], [-0.3], 120, 1,
                                                                 0.4, 50.0), 1,
                     (ArimaSpec((1, 1, 1), None, None, "drift"),)),
        CorpusSeries("real GDP, log", log.forward(macro["realgdp"].to_numpy(float)), 4,
                     (ArimaSpec((1, 1, 0), None, None, "drift"),)),
    ]
    if size == "ci":
        return items
    co2 = sm.datasets.co2.load_pandas().data["co2"].resample("MS").mean().interpolate()
    elnino = sm.datasets.elnino.load_pandas().data.iloc[:, 1:].to_numpy(float).ravel()
    items += [
        CorpusSeries("Series G, Box-Cox 0.5", boxcox.forward(g), 12,
                     (_airline(), ArimaSpec((2, 1, 0), (0, 1, 1), 12))),
        CorpusSeries("Series G", g, 12, (_airline(),)),
        CorpusSeries("sunspots", sunspots, 1, (ArimaSpec((2, 0, 0), None, None, "constant"),
                                               ArimaSpec((3, 0, 1), None, None, "constant"))),
        CorpusSeries("sunspots, Box-Cox 0.5", Transform("boxcox", 0.5).forward(sunspots + 1),
                     1, (ArimaSpec((2, 0, 1), None, None, "constant"),)),
        CorpusSeries("Nile, log", log.forward(nile), 1, (ArimaSpec((0, 1, 1)),
                                                         ArimaSpec((1, 1, 1)))),
        CorpusSeries("real consumption, log", log.forward(macro["realcons"].to_numpy(float)),
                     4, (ArimaSpec((0, 1, 1), (0, 0, 1), 4, "drift"),
                         ArimaSpec((1, 2, 1)))),
        CorpusSeries("real investment, log", log.forward(macro["realinv"].to_numpy(float)), 4,
                     (ArimaSpec((1, 1, 0), None, None, "drift"),)),
        CorpusSeries("inflation", macro["infl"].to_numpy(float), 4,
                     (ArimaSpec((1, 0, 1), None, None, "constant"),)),
        CorpusSeries("unemployment", macro["unemp"].to_numpy(float), 4,
                     (ArimaSpec((2, 1, 0)), ArimaSpec((1, 0, 0), (1, 0, 0), 4, "constant"))),
        CorpusSeries("CO2 monthly", co2.to_numpy(float)[-240:], 12,
                     (_airline(), ArimaSpec((1, 0, 1), (0, 1, 1), 12, "drift"))),
        CorpusSeries("El Nino", elnino[-240:], 12,
                     (ArimaSpec((1, 0, 0), (1, 0, 0), 12, "constant"),
                      ArimaSpec((2, 0, 0), (0, 1, 1), 12))),
        CorpusSeries("generated AR(2) constant", _generated(2, [0.6, -0.3], [], 150, 0,
                                                            level=10.0), 1,
                     (ArimaSpec((2, 0, 0), None, None, "constant"),)),
        CorpusSeries("generated ARMA(1,2) constant", _generated(3, [0.8], [0.4, 0.2], 150, 0,
                                                                level=-3.0), 1,
                     (ArimaSpec((1, 0, 2), None, None, "constant"),)),
        CorpusSeries("generated IMA(1,1)", _generated(4, [], [-0.6], 150, 1), 1,
                     (ArimaSpec((0, 1, 1)),)),
        CorpusSeries("generated ARIMA(2,1,1) drift", _generated(5, [0.4, 0.2], [0.3], 150, 1,
                                                                drift=1.0), 1,
                     (ArimaSpec((2, 1, 1), None, None, "drift"),)),
        CorpusSeries("generated ARIMA(0,2,2)", _generated(6, [], [-0.5, 0.2], 150, 2), 1,
                     (ArimaSpec((0, 2, 2)),)),
        CorpusSeries("generated seasonal ARIMA(1,0,0)×(0,1,1), season 12, drift",
                     _seasonal(7, 0.5, -0.6, 12, 144, 0.02), 12,
                     (ArimaSpec((1, 0, 0), (0, 1, 1), 12, "drift"), _airline())),
        CorpusSeries("generated seasonal ARIMA(0,1,1)×(1,0,0), season 4",
                     _seasonal_ar(8, -0.4, 0.6, 4, 160), 4,
                     (ArimaSpec((0, 1, 1), (1, 0, 0), 4),)),
        CorpusSeries("generated airline", _seasonal_airline(9, -0.4, -0.6, 12, 168), 12,
                     (_airline(),)),
    ]
    return items


def _seasonal(seed: int, phi: float, big_theta: float, s: int, n: int, drift: float
              ) -> np.ndarray:
    """(1 - phi B) (1 - B^s) (y_t - drift t) = (1 + Theta B^s) e_t."""
    ma = np.zeros(s + 1)
    ma[0], ma[s] = 1.0, big_theta
    rng = np.random.default_rng(seed)
    u = arma_generate_sample(np.r_[1.0, -phi], ma, n, distrvs=rng.standard_normal, burnin=100)
    x = u.copy()
    for t in range(s, n):
        x[t] = x[t - s] + u[t]
    return x + drift * s * np.arange(n) + 20.0


def _seasonal_ar(seed: int, theta: float, big_phi: float, s: int, n: int) -> np.ndarray:
    """(1 - Phi B^s)(1 - B) y_t = (1 + theta B) e_t."""
    ar = np.zeros(s + 1)
    ar[0], ar[s] = 1.0, -big_phi
    rng = np.random.default_rng(seed)
    u = arma_generate_sample(ar, np.r_[1.0, theta], n, distrvs=rng.standard_normal, burnin=100)
    return np.cumsum(u)


def _seasonal_airline(seed: int, theta: float, big_theta: float, s: int, n: int
                      ) -> np.ndarray:
    """(1 - B)(1 - B^s) y_t = (1 + theta B)(1 + Theta B^s) e_t, e_t ~ N(0, 0.05^2)."""
    ma = np.zeros(s + 2)
    ma[0], ma[1], ma[s], ma[s + 1] = 1.0, theta, big_theta, theta * big_theta
    rng = np.random.default_rng(seed)
    u = 0.05 * arma_generate_sample([1.0], ma, n, distrvs=rng.standard_normal, burnin=100)
    x = u.copy()
    for t in range(s, n):
        x[t] = x[t - s] + u[t]
    return np.cumsum(x) + 5.0


def origins(item: CorpusSeries, spec: ArimaSpec, count: int) -> list[int]:
    """``count`` training-window ends spread over the last third of the series."""
    n = len(item.values)
    first = max(spec.min_train(item.season_length) + 10, (2 * n) // 3)
    return sorted({int(e) for e in np.linspace(first, n, count)})


def exact_model(spec: ArimaSpec, y: np.ndarray) -> SARIMAX:
    """statsmodels' model of the differenced series, whose likelihood is the exact one
    (``SARIMAX`` with ``simple_differencing=True``, the deterministic regressor differenced
    alike); its first parameter is then the constant or drift."""
    n = len(y)
    exog = None
    if spec.deterministic == "drift":
        exog = np.arange(1.0, n + 1.0)
    elif spec.deterministic == "constant":
        exog = np.ones(n)
    seasonal = (*spec.seasonal, spec.period) if spec.seasonal else (0, 0, 0, 0)
    return SARIMAX(y, exog=exog, order=spec.order, seasonal_order=seasonal,
                   simple_differencing=True)


def exact_loglike(spec: ArimaSpec, y: np.ndarray, params: Params) -> float:
    """statsmodels' exact likelihood of the differenced series (:func:`exact_model`)."""
    model = exact_model(spec, y)
    values = [params[spec.deterministic] if i == 0 and model.k_exog else params[name]
              for i, name in enumerate(model.param_names)]
    with warnings.catch_warnings():
        # the differenced regressor is constant, which statsmodels remarks on
        warnings.simplefilter("ignore")
        return float(model.loglike(np.array(values)))
