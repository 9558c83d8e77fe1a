"""An invented scenario for demonstrations: Tallow & Finch Provisioners, a fictional
regional food wholesaler, with eight years of monthly figures.

Every number is generated here from a seed; nothing comes from a real organisation or a
published data set. The series mix the features a finance team meets: trend, multiplicative
and additive seasonality, autocorrelated noise, and level shifts (a new supermarket
contract lifts bakery sales from April 2021; catering loses a large client in September
2022). Pallets shipped grow steadily, a fixed number more each year, with a seasonal swing
in proportion to the volume: over the backtest's origins the log-scale ARIMA forecasts
too high on average, Theta too low and the drift ARIMA a little high, and the mean of the
three ranks first, narrowly.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from backtest.series import Series, make_series

START_YEAR = 2017
MONTHS = 96
DEMO_CANDIDATES: list[dict[str, Any]] = [
    {"family": "benchmark", "method": "seasonal_naive"},
    {"family": "benchmark", "method": "naive"},
    {"family": "benchmark", "method": "drift"},
    {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]}, "transform": "log"},
    {"family": "arima", "order": [1, 0, 0], "seasonal": {"order": [0, 1, 1]},
     "deterministic": "drift"},
    {"family": "ets", "error": "additive", "trend": "damped", "season": "additive"},
    {"family": "theta"},
    # remedies: Theta with intervals from its own past errors, and a combination
    {"family": "theta", "intervals": {"kind": "empirical", "min_errors": 12}},
    {"family": "combination", "members": [
        {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
         "transform": "log"},
        {"family": "arima", "order": [1, 0, 0], "seasonal": {"order": [0, 1, 1]},
         "deterministic": "drift"},
        {"family": "theta"}]},
]
RECALIBRATED = ((6, 7),)
"""Positions in ``DEMO_CANDIDATES`` of a model and the same model with empirical intervals."""
COMBINED = (8,)
"""Positions in ``DEMO_CANDIDATES`` of combinations."""
DEMO_PLAN: dict[str, Any] = {"horizon": 12, "max_origins": 24, "refit": 6, "levels": [80, 95],
                   "seed": 7}


def _months() -> list[str]:
    return [f"{START_YEAR + i // 12}-{i % 12 + 1:02d}" for i in range(MONTHS)]


def _ar1(rng: np.random.Generator, phi: float, sd: float) -> np.ndarray:
    shocks = rng.normal(0.0, sd, MONTHS)
    out = np.empty(MONTHS)
    out[0] = shocks[0]
    for t in range(1, MONTHS):
        out[t] = phi * out[t - 1] + shocks[t]
    return out


def demo_series(seed: int = 2017) -> list[Series]:
    """The scenario's series, identical for the same seed."""
    rng = np.random.default_rng(seed)
    t = np.arange(MONTHS)
    month = t % 12
    season = np.sin(2 * np.pi * (month - 3) / 12)
    produce = 820 * (1 + 0.004 * t) * (1 + 0.18 * season) * np.exp(_ar1(rng, 0.4, 0.03))
    bakery = 410 + 1.1 * t + 35 * np.cos(2 * np.pi * month / 12) + _ar1(rng, 0.5, 9)
    bakery += np.where(t >= 51, 70.0, 0.0)
    energy = 130 + 0.35 * t + 28 * np.cos(2 * np.pi * month / 12) + _ar1(rng, 0.6, 5)
    pallets = np.round(5200 * (1 + 0.006 * t) * (1 + 0.10 * season) + 0.5 * _ar1(rng, 0.3, 120))
    fuel = 240 + np.cumsum(rng.normal(0.4, 6.0, MONTHS))
    catering = (300 + 0.6 * t) * (1 + 0.25 * np.sin(2 * np.pi * (month - 5) / 12))
    catering = catering * np.where(t >= 68, 0.78, 1.0) + _ar1(rng, 0.3, 10)
    labels = _months()
    figures = {
        "sales/fresh-produce": produce, "sales/bakery": bakery, "sales/catering": catering,
        "costs/cold-storage-energy": energy, "costs/fleet-fuel": fuel,
        "volumes/pallets-shipped": pallets,
    }
    return [make_series(key, "P1M", zip(labels, np.round(values, 2), strict=True))
            for key, values in figures.items()]
