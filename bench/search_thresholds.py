"""Why the order search's defaults are what they are: a small seeded simulation.

Four measurements, each on simulated series whose right answer is known:

1. Seasonal-strength threshold (default 0.64). Monthly series of 72 observations: half
   need a seasonal difference (a seasonal random walk y_t = y_{t-12} + e_t of random
   strength plus AR(1) noise of standard deviation 1), half do not (AR(1) or a random
   walk, no season). For each threshold, the share of seasonal series left undifferenced
   and of non-seasonal series differenced.
2. Root limit (default 0.99). MA(1) fits of over-differenced white noise (true MA root 1:
   must be rejected) and of genuine MA(1) series with theta = -0.9 (must be kept), 120
   observations. For each limit, the share of each group rejected.
3. Criterion (default AICc). ARMA series of 60 observations from four known orders; all
   orders with p, q <= 3 are fitted, and each criterion's choice is compared with the true
   order (share right, share over-fitted).
4. Order caps (p, q <= 5, P, Q <= 2, d <= 2, D <= 1). Observations left per estimated
   parameter at the caps, after the most differencing, for windows of 3 to 8 seasons.

    .venv/bin/python bench/search_thresholds.py [--replications 100]

The printed result of the default run is kept in ``bench/search_thresholds.txt``.
"""

from __future__ import annotations

import argparse
import itertools
import time
import warnings

import numpy as np
from statsmodels.tsa.arima.model import ARIMA
from statsmodels.tsa.arima_process import arma_generate_sample

from backtest.models.arima_trial import MAX_INVERSE_ROOT, largest_inverse_root
from backtest.models.differencing import STRONG_SEASONALITY, seasonal_strength

SEED = 20261203
PERIOD = 12


def _ar1(rng: np.random.Generator, n: int, phi: float) -> np.ndarray:
    return arma_generate_sample([1, -phi], [1], n, scale=1.0, distrvs=rng.standard_normal)


def strength_study(replications: int, rng: np.random.Generator) -> None:
    n = 72
    seasonal, plain = [], []
    for _ in range(replications):
        shocks = rng.normal(0, rng.uniform(0.1, 0.6), n + PERIOD)
        walk = np.zeros(n + PERIOD)
        walk[:PERIOD] = rng.normal(0, rng.uniform(0.3, 1.5), PERIOD)
        for t in range(PERIOD, n + PERIOD):
            walk[t] = walk[t - PERIOD] + shocks[t]
        seasonal.append(seasonal_strength(walk[PERIOD:] + _ar1(rng, n, 0.5), PERIOD))
        level = np.cumsum(rng.normal(0, 1, n)) if rng.random() < 0.5 else _ar1(rng, n, 0.7)
        plain.append(seasonal_strength(level, PERIOD))
    seasonal_f, plain_f = np.array(seasonal), np.array(plain)
    print(f"1. Seasonal strength F_S on {replications} + {replications} monthly series (n = {n})")
    print(f"   F_S median: seasonal {np.median(seasonal_f):.2f}, non-seasonal "
          f"{np.median(plain_f):.2f}")
    print("   threshold  seasonal left undifferenced  non-seasonal differenced  total error")
    for threshold in (0.4, 0.5, 0.6, STRONG_SEASONALITY, 0.7, 0.8, 0.9):
        missed = np.mean(seasonal_f < threshold)
        wrong = np.mean(plain_f >= threshold)
        mark = "  <- default" if threshold == STRONG_SEASONALITY else ""
        print(f"   {threshold:9.2f}  {missed:27.1%}  {wrong:24.1%}  {missed + wrong:11.1%}{mark}")


def _ma_root(y: np.ndarray) -> float:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fit = ARIMA(y, order=(0, 0, 1), trend="c").fit()
    return largest_inverse_root(np.r_[1.0, fit.maparams])


def root_study(replications: int, rng: np.random.Generator) -> None:
    n = 120
    over = [_ma_root(np.diff(rng.normal(0, 1, n + 1))) for _ in range(replications)]
    genuine = [_ma_root(arma_generate_sample([1], [1, -0.9], n, distrvs=rng.standard_normal))
               for _ in range(replications)]
    over_r, genuine_r = np.array(over), np.array(genuine)
    print(f"\n2. Root limit: MA(1) fits, {replications} over-differenced white-noise series "
          f"(true root 1) and {replications} MA(1) series with theta = -0.9 (n = {n})")
    print("   limit   over-differenced caught  genuine 0.9 root rejected")
    for limit in (0.95, 0.97, 0.98, MAX_INVERSE_ROOT, 0.995, 0.999):
        mark = "  <- default" if limit == MAX_INVERSE_ROOT else ""
        print(f"   {limit:5.3f}  {np.mean(over_r > limit):23.1%}  "
              f"{np.mean(genuine_r > limit):25.1%}{mark}")


def _criteria(y: np.ndarray, p: int, q: int) -> tuple[float, float, float]:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fit = ARIMA(y, order=(p, 0, q), trend="c").fit()
    return fit.aic, fit.aicc, fit.bic


def criterion_study(replications: int, rng: np.random.Generator) -> None:
    n = 60
    truths = {(1, 0): ([1, -0.6], [1]), (0, 1): ([1], [1, 0.6]),
              (1, 1): ([1, -0.6], [1, 0.4]), (2, 0): ([1, -0.5, 0.3], [1])}
    orders = list(itertools.product(range(4), range(4)))
    right = np.zeros(3)
    over = np.zeros(3)
    count = 0
    for (p, q), (ar, ma) in truths.items():
        for _ in range(max(1, replications // 4)):
            y = arma_generate_sample(ar, ma, n, distrvs=rng.standard_normal)
            scores = np.array([_criteria(y, *o) for o in orders])
            for k in range(3):
                chosen = orders[int(np.argmin(scores[:, k]))]
                right[k] += chosen == (p, q)
                over[k] += chosen[0] + chosen[1] > p + q
            count += 1
    print(f"\n3. Criterion: {count} ARMA series (n = {n}) of known orders (1,0), (0,1), (1,1), "
          f"(2,0); every p, q <= 3 fitted")
    print("   criterion  true order chosen  over-fitted")
    for k, name in enumerate(("AIC", "AICc", "BIC")):
        mark = "  <- default" if name == "AICc" else ""
        print(f"   {name:9}  {right[k] / count:17.1%}  {over[k] / count:11.1%}{mark}")


def caps_study() -> None:
    print("\n4. Order caps p, q <= 5, P, Q <= 2, d <= 2, D <= 1 (the arima family's limits): "
          "observations per estimated parameter at the caps, monthly windows")
    parameters = 5 + 5 + 2 + 2 + 1  # p, q, P, Q and the innovation variance
    print("   window (seasons)  left after d = 2, D = 1  per parameter at the caps  at the "
          "search defaults (3,3,1,1)")
    for seasons in (3, 4, 5, 6, 8):
        left = seasons * PERIOD - 2 - PERIOD
        print(f"   {seasons:16d}  {left:23d}  {left / parameters:26.1f}  "
              f"{left / (3 + 3 + 1 + 1 + 1):24.1f}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--replications", type=int, default=100)
    args = parser.parse_args()
    rng = np.random.default_rng(SEED)
    started = time.perf_counter()
    strength_study(args.replications, rng)
    root_study(args.replications, rng)
    criterion_study(args.replications, rng)
    caps_study()
    print(f"\n(seed {SEED}, {args.replications} replications, "
          f"{time.perf_counter() - started:.0f} s)")


if __name__ == "__main__":
    main()
