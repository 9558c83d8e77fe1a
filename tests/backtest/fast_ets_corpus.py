"""Validation corpus of the fast ETS estimator: series, model classes and origins.

Used by ``tests/backtest/test_fast_ets.py`` (a CI-sized part) and
``bench/fast_ets_bench.py`` (at least 500 re-estimated folds over at least 20 series).
Series: Series G (Box & Jenkins 1976, from ``tests/data``), open datasets statsmodels
ships (Nile, sunspots, macrodata, CO2, El Niño), and series simulated from ETS models with
known parameters (statsmodels' ``ETSResults.simulate`` from the initial states, seeded).
Transforms: none, log and Box-Cox. Every error, trend and season type of the ``ets``
family occurs.

Each fold is judged on statsmodels' ``ETSModel.loglike``, the likelihood both estimators
maximise.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import statsmodels.api as sm

from backtest.models.ets import EtsSpec
from backtest.transforms import Transform

DATA = Path(__file__).resolve().parents[1] / "data"


@dataclass(frozen=True)
class CorpusSeries:
    """A named series (already transformed), its season length and the classes fitted."""

    name: str
    values: np.ndarray
    season_length: int
    specs: tuple[EtsSpec, ...]


def _ets(code: str) -> EtsSpec:
    """``"MAdA"``-style shorthand: error, trend (``N``, ``A``, ``Ad``), season."""
    kinds = {"A": "additive", "M": "multiplicative", "N": "none", "Ad": "damped"}
    error, rest = code[0], code[1:]
    trend, season = (rest[:2], rest[2]) if rest.startswith("Ad") else (rest[0], rest[1])
    return EtsSpec(kinds[error], kinds[trend], kinds[season])  # type: ignore[arg-type]


def simulated(code: str, params: dict[str, float], n: int, m: int, seed: int,
              sigma: float) -> np.ndarray:
    """A series simulated from the ETS class ``code`` with ``params`` (statsmodels' names)
    from its initial states, with Gaussian errors of standard deviation ``sigma``
    (relative for a multiplicative error)."""
    spec = _ets(code)
    model = spec.model(np.ones(max(n, 2 * m + 2)), m)
    vector = np.array([params[name] for name in model.param_names])
    results = model.smooth(vector)
    errors = sigma * np.random.default_rng(seed).standard_normal((n, 1))
    path = results.simulate(n, anchor="start", repetitions=1, random_errors=errors)
    return np.asarray(path, dtype=float).ravel()


def _seasons(m: int, amplitude: float, multiplicative: bool) -> dict[str, float]:
    shape = amplitude * np.sin(2 * np.pi * np.arange(m) / m)
    shape = 1 + shape - shape[-1] if multiplicative else shape - shape[-1]
    return {f"initial_seasonal.{j}": float(v) for j, v in enumerate(shape)}


def corpus(size: str = "ci") -> list[CorpusSeries]:
    """The corpus: ``"ci"`` (a few series) or ``"full"`` (at least 20 series)."""
    g = pd.read_csv(DATA / "series_g.csv").iloc[:, 1].to_numpy(float)
    log, boxcox = Transform("log"), Transform("boxcox", 0.5)
    nile = sm.datasets.nile.load_pandas().data["volume"].to_numpy(float)
    macro = sm.datasets.macrodata.load_pandas().data
    items = [
        CorpusSeries("Series G", g, 12, (_ets("AAA"), _ets("MAM"), _ets("AAdN"))),
        CorpusSeries("Series G, log", log.forward(g), 12, (_ets("ANA"), _ets("AAdA"))),
        CorpusSeries("Nile", nile, 1, (_ets("ANN"), _ets("MNN"))),
        CorpusSeries("real consumption", macro["realcons"].to_numpy(float), 4,
                     (_ets("MAdN"), _ets("AAM"))),
    ]
    if size == "ci":
        return items
    sunspots = sm.datasets.sunspots.load_pandas().data["SUNACTIVITY"].to_numpy(float)
    co2 = sm.datasets.co2.load_pandas().data["co2"].resample("MS").mean().interpolate()
    elnino = sm.datasets.elnino.load_pandas().data.iloc[:, 1:].to_numpy(float).ravel()
    items += [
        CorpusSeries("Series G, Box-Cox 0.5", boxcox.forward(g), 12,
                     (_ets("AAA"), _ets("ANA"), _ets("MAdM"))),
        CorpusSeries("Series G, first 96", g[:96], 12, (_ets("MNM"), _ets("AAdM"))),
        CorpusSeries("Nile, log", log.forward(nile), 1, (_ets("AAN"), _ets("AAdN"))),
        CorpusSeries("sunspots + 1", sunspots + 1, 1, (_ets("ANN"), _ets("MAdN"))),
        CorpusSeries("sunspots, Box-Cox 0.5", boxcox.forward(sunspots + 1), 1,
                     (_ets("AAdN"),)),
        CorpusSeries("real GDP", macro["realgdp"].to_numpy(float), 4,
                     (_ets("MAN"), _ets("AAdN"))),
        CorpusSeries("real GDP, log", log.forward(macro["realgdp"].to_numpy(float)), 4,
                     (_ets("AAN"),)),
        CorpusSeries("real investment", macro["realinv"].to_numpy(float), 4,
                     (_ets("MNN"), _ets("MAdA"))),
        CorpusSeries("unemployment", macro["unemp"].to_numpy(float), 4,
                     (_ets("ANN"), _ets("AAdA"))),
        CorpusSeries("CPI", macro["cpi"].to_numpy(float), 4, (_ets("MAN"), _ets("MAdM"))),
        CorpusSeries("CO2 monthly", co2.to_numpy(float)[-180:], 12,
                     (_ets("AAA"), _ets("MAM"))),
        CorpusSeries("El Nino", elnino[-180:], 12, (_ets("ANA"), _ets("MNA"))),
        CorpusSeries("simulated ANN", simulated(
            "ANN", {"smoothing_level": 0.3, "initial_level": 50.0}, 120, 1, 11, 5.0), 1,
            (_ets("ANN"), _ets("AAdN"))),
        CorpusSeries("simulated AAdN", simulated(
            "AAdN", {"smoothing_level": 0.5, "smoothing_trend": 0.1, "damping_trend": 0.9,
                     "initial_level": 100.0, "initial_trend": 2.0}, 120, 1, 12, 3.0), 1,
            (_ets("AAdN"), _ets("AAN"))),
        CorpusSeries("simulated MNN", simulated(
            "MNN", {"smoothing_level": 0.4, "initial_level": 200.0}, 120, 1, 13, 0.05) / 10.0, 1,
            (_ets("MNN"),)),
        CorpusSeries("simulated AAA, season 4", simulated(
            "AAA", {"smoothing_level": 0.4, "smoothing_trend": 0.05,
                    "smoothing_seasonal": 0.1, "initial_level": 40.0, "initial_trend": 0.5,
                    **_seasons(4, 5.0, False)}, 100, 4, 14, 1.5), 4,
            (_ets("AAA"), _ets("ANA"))),
        CorpusSeries("simulated MAdM, season 12", simulated(
            "MAdM", {"smoothing_level": 0.3, "smoothing_trend": 0.05,
                     "smoothing_seasonal": 0.1, "damping_trend": 0.95,
                     "initial_level": 100.0, "initial_trend": 1.0,
                     **_seasons(12, 0.2, True)}, 144, 12, 15, 0.03), 12,
            (_ets("MAdM"), _ets("MAM"))),
        CorpusSeries("simulated MNA, season 12", simulated(
            "MNA", {"smoothing_level": 0.2, "smoothing_seasonal": 0.05,
                    "initial_level": 80.0, **_seasons(12, 8.0, False)}, 144, 12, 16, 0.04), 12,
            (_ets("MNA"), _ets("ANA"))),
    ]
    return items


def panel_values(index: int, n_obs: int = 120) -> np.ndarray:
    """Series ``index`` of ``bench/engine_bench.py``'s generated panel (same seed, same
    draws): a positive monthly series, trend, a seasonal pattern and noise on the log
    scale."""
    rng = np.random.default_rng(2024)
    t = np.arange(n_obs)
    for _ in range(index + 1):
        season = rng.normal(0, 0.12, 12)
        level = 4 + rng.uniform(-0.5, 0.5) + rng.uniform(0, 0.012) * t
        noise = np.cumsum(rng.normal(0, 0.02, n_obs)) + rng.normal(0, 0.03, n_obs)
    values: np.ndarray = np.exp(level + season[t % 12] + noise)
    return values


def multimodal_folds() -> list[tuple[str, np.ndarray, EtsSpec]]:
    """Monthly windows (season length 12) where a search with the exact gradient from
    statsmodels' start values ended in a lower mode than statsmodels' own search (by 0.29
    and 0.78 in log-likelihood): ETS(A,A,A) on the engine bench's panel series 15, first
    92 months, and series 19, first 95."""
    return [(f"panel series {index}, first {end}", panel_values(index)[:end], _ets("AAA"))
            for index, end in ((15, 92), (19, 95))]


def origins(item: CorpusSeries, spec: EtsSpec, count: int) -> list[int]:
    """``count`` training-window ends spread over the last third of the series."""
    n = len(item.values)
    first = max(spec.min_train(item.season_length) + 10, (2 * n) // 3)
    return sorted({int(e) for e in np.linspace(first, n, count)})


def reference_loglike(spec: EtsSpec, y: np.ndarray, season_length: int,
                      params: dict[str, float]) -> float:
    """statsmodels' ``ETSModel.loglike`` at ``params`` (its names)."""
    model = spec.model(y, season_length)
    return float(model.loglike(np.array([params[name] for name in model.param_names])))
