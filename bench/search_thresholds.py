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
   orders with p, q <= 3 are fitted (fast exact-likelihood estimator, which matches
   statsmodels' exact likelihood: tests/backtest/test_fast_arima.py), and each criterion's
   choice is compared with the true order (share right, share over-fitted) and by its
   forecasts of the next 12 values (mean squared error over that of the true order's fit).
4. Order caps (p, q <= 5, P, Q <= 2, d <= 2, D <= 1). Observations left per estimated
   parameter at the caps, after the most differencing, for windows of 3 to 8 seasons.
5. Search defaults (max_order 3, 2, 3, 1, 1, 1; max_models 40). Seasonal monthly series of
   72 observations from four known models are searched twice, at the defaults and at the
   widest caps (5, 2, 5, 2, 1, 2 with up to 200 fits), by the fast estimator; the bench
   prints how often the defaults' caps bind, how many fits a search used, how often the
   wide search chose another order, and the 12-step MASE of both on the next 12 months.

    .venv/bin/python bench/search_thresholds.py [--replications 100] [--search-replications 40]
        [--jobs 3]

Studies 1 and 2 and every true model of studies 3 and 5 have their own seeded stream, so
the parts run in separate processes and the result does not depend on ``--jobs``.

The printed result of the default run is kept in ``bench/search_thresholds.txt``.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import itertools
import time
import warnings
from concurrent.futures import ProcessPoolExecutor

import numpy as np
from statsmodels.tsa.arima.model import ARIMA
from statsmodels.tsa.arima_process import arma_generate_sample

from backtest.models.arima import ArimaSpec
from backtest.models.arima_search import ArimaSearchSpec, OrderLimits
from backtest.models.arima_trial import MAX_INVERSE_ROOT, largest_inverse_root
from backtest.models.differencing import STRONG_SEASONALITY, seasonal_strength
from backtest.models.fast_arima import fast_estimate
from backtest.models.fast_arima_trial import information_criterion
from backtest.models.fast_fallback import FastEstimationError

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


def _criteria(y: np.ndarray, p: int, q: int) -> tuple[np.ndarray, ArimaSpec, dict | None]:
    """AIC, AICc and BIC of ARMA(p, q) with a constant by the fast exact-likelihood
    estimator (all infinite where it fails or does not converge), with the estimates."""
    spec = ArimaSpec((p, 0, q), None, None, "constant")
    try:
        estimate = fast_estimate(spec, y, 1)
    except FastEstimationError:
        return np.full(3, np.inf), spec, None
    if not estimate.converged:
        return np.full(3, np.inf), spec, None
    values = [information_criterion(estimate, c) for c in ("aic", "aicc", "bic")]
    return np.array(values), spec, estimate.params


CRITERION_TRUTHS = {(1, 0): ([1, -0.6], [1]), (0, 1): ([1], [1, 0.6]),
                    (1, 1): ([1, -0.6], [1, 0.4]), (2, 0): ([1, -0.5, 0.3], [1])}
CRITERION_N, CRITERION_HORIZON = 60, 12


def criterion_rows(truth: tuple[int, int], series: int) -> np.ndarray:
    """Per simulated series of ARMA ``truth``: for AIC, AICc and BIC, whether the true order
    was chosen, whether a larger one was, and the chosen fit's 12-step squared error; then
    the true order's squared error and the count of failed fits (one row per series)."""
    rng = np.random.default_rng([SEED, 3, *truth])
    ar, ma = CRITERION_TRUTHS[truth]
    orders = list(itertools.product(range(4), range(4)))
    rows = []
    for _ in range(series):
        path = arma_generate_sample(ar, ma, CRITERION_N + CRITERION_HORIZON,
                                    distrvs=rng.standard_normal)
        y, future = path[:CRITERION_N], path[CRITERION_N:]
        fits = [_criteria(y, *o) for o in orders]
        scores = np.array([f[0] for f in fits])
        row = []
        for k in range(3):
            best = int(np.argmin(scores[:, k]))
            _, spec, params = fits[best]
            point = spec.forecast(y, 1, params, CRITERION_HORIZON, (80,), 0).mean
            row += [orders[best] == truth, sum(orders[best]) > sum(truth),
                    np.mean((future - point) ** 2)]
        _, spec, params = fits[orders.index(truth)]
        truth_point = (np.full(CRITERION_HORIZON, np.nan) if params is None else
                       spec.forecast(y, 1, params, CRITERION_HORIZON, (80,), 0).mean)
        rows.append([*row, np.mean((future - truth_point) ** 2),
                     sum(f[2] is None for f in fits)])
    return np.array(rows, dtype=float)


def print_criterion(parts: list[np.ndarray]) -> None:
    rows = np.vstack(parts)
    count, fitted = len(rows), len(rows) * 16
    known = np.isfinite(rows[:, 9])  # the true order's own fit converged
    print(f"\n3. Criterion: {count} ARMA series (n = {CRITERION_N}) of known orders "
          f"{', '.join(str(t).replace(' ', '') for t in CRITERION_TRUTHS)}; every p, q <= 3 "
          f"fitted with a constant ({int(rows[:, 10].sum())} of {fitted} fits failed or did "
          "not converge and were left out)")
    print(f"   criterion  true order chosen  over-fitted  {CRITERION_HORIZON}-step MSE / true "
          "order's fit")
    for k, name in enumerate(("AIC", "AICc", "BIC")):
        mark = "  <- default" if name == "AICc" else ""
        ratio = rows[known, 3 * k + 2].sum() / rows[known, 9].sum()
        print(f"   {name:9}  {rows[:, 3 * k].mean():17.1%}  {rows[:, 3 * k + 1].mean():11.1%}  "
              f"{ratio:30.3f}{mark}")


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


def _sarima(rng: np.random.Generator, n: int, ar: list[float], ma: list[float],
            seasonal_ma: float, seasonal_ar: float, d: int) -> np.ndarray:
    """(p,d,q)x(P,1,Q) monthly series: an ARMA with seasonal factors, integrated once
    seasonally and ``d`` times ordinarily, plus a burn-in that is dropped."""
    burn = 5 * PERIOD
    ar_poly = np.polymul(np.r_[1.0, -np.asarray(ar)],
                         np.r_[1.0, np.zeros(PERIOD - 1), -seasonal_ar])
    ma_poly = np.polymul(np.r_[1.0, np.asarray(ma)],
                         np.r_[1.0, np.zeros(PERIOD - 1), seasonal_ma])
    x = arma_generate_sample(ar_poly, ma_poly, n + burn, distrvs=rng.standard_normal)
    for t in range(PERIOD, n + burn):
        x[t] += x[t - PERIOD]
    for _ in range(d):
        x = np.cumsum(x)
    return 50.0 + x[burn:]


def _mase(y: np.ndarray, future: np.ndarray, forecast: np.ndarray) -> float:
    scale = np.mean(np.abs(y[PERIOD:] - y[:-PERIOD]))
    return float(np.mean(np.abs(future - forecast)) / scale)


SEARCH_N, SEARCH_HORIZON = 72, 12
#: True models of study 5: AR, MA, seasonal MA, seasonal AR coefficients and d (D = 1).
SEARCH_MODELS = {"(0,1,1)x(0,1,1)": ([], [-0.4], -0.6, 0.0, 1),
                 "(1,0,0)x(0,1,1)": ([0.7], [], -0.5, 0.0, 0),
                 "(2,0,1)x(1,1,0)": ([0.5, 0.3], [-0.4], 0.0, -0.4, 0),
                 "(1,1,2)x(0,1,1)": ([0.6], [-0.3, 0.3], -0.5, 0.0, 1)}


def search_rows(name: str, series: int) -> list[tuple]:
    """Per simulated series of model ``name``: (orders, fits used, 12-step MASE) of the
    default search and of the widest one."""
    rng = np.random.default_rng([SEED, 5, list(SEARCH_MODELS).index(name)])
    ar, ma, sma, sar, d = SEARCH_MODELS[name]
    default = ArimaSearchSpec()
    widest = ArimaSearchSpec(limits=OrderLimits(5, 2, 5, 2, 1, 2), max_models=200)
    rows = []
    for _ in range(series):
        path = _sarima(rng, SEARCH_N + SEARCH_HORIZON, ar, ma, sma, sar, d)
        y, future = path[:SEARCH_N], path[SEARCH_N:]
        found = []
        for spec in (default, widest):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                fit = spec.fit(y, PERIOD, estimator="fast", keep_raw=False)
                point = spec.forecast(y, PERIOD, fit.params, SEARCH_HORIZON, (80,), 0).mean
            orders = tuple(int(fit.params[f"order.{k}"]) for k in "pdqPDQ")
            found.append((orders, fit.params["search.fitted"], _mase(y, future, point)))
        rows.append((name, *found))
    return rows


def print_search(parts: list[list[tuple]]) -> None:
    rows = [row for part in parts for row in part]
    at_cap = [max(r[1][0][0], r[1][0][2]) == 3 for r in rows]
    seasonal_cap = [max(r[1][0][3], r[1][0][5]) == 1 for r in rows]
    wide_beyond = [max(r[2][0][0], r[2][0][2]) > 3 or max(r[2][0][3], r[2][0][5]) > 1
                   for r in rows]
    print(f"\n5. Search defaults: {len(rows)} seasonal monthly series (n = {SEARCH_N}) from "
          f"{', '.join(SEARCH_MODELS)}, searched at the defaults (3,2,3)x(1,1,1) with 40 "
          "fits and at the widest caps (5,2,5)x(2,1,2) with 200 fits (fast estimator)")
    print(f"   default search: p or q at its cap 3 in {np.mean(at_cap):.1%}, P or Q at its cap "
          f"1 in {np.mean(seasonal_cap):.1%}; fits used median "
          f"{np.median([r[1][1] for r in rows]):.0f}, at the 40 limit in "
          f"{np.mean([r[1][1] >= 40 for r in rows]):.1%}")
    print(f"   widest search: an order beyond the defaults in {np.mean(wide_beyond):.1%}, "
          f"another order than the default search in "
          f"{np.mean([r[1][0] != r[2][0] for r in rows]):.1%}; fits used median "
          f"{np.median([r[2][1] for r in rows]):.0f}")
    print(f"   true model         {SEARCH_HORIZON}-step MASE: defaults  widest  (mean over "
          "series)")
    for name in SEARCH_MODELS:
        mine = [r for r in rows if r[0] == name]
        print(f"   {name:17}  {np.mean([r[1][2] for r in mine]):21.3f}  "
              f"{np.mean([r[2][2] for r in mine]):6.3f}")
    print(f"   {'all':17}  {np.mean([r[1][2] for r in rows]):21.3f}  "
          f"{np.mean([r[2][2] for r in rows]):6.3f}")


def printed(study, replications: int, part: int) -> str:
    """The text ``study`` prints on its own seeded stream."""
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        study(replications, np.random.default_rng([SEED, part]))
    return out.getvalue()


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--replications", type=int, default=100,
                        help="series per group in studies 1 and 2, in all in study 3")
    parser.add_argument("--search-replications", type=int, default=40,
                        help="series in study 5 (two searches each)")
    parser.add_argument("--jobs", type=int, default=3,
                        help="processes the independent parts run in")
    args = parser.parse_args()
    started = time.perf_counter()
    with ProcessPoolExecutor(max_workers=args.jobs) as pool:
        thresholds = [pool.submit(printed, strength_study, args.replications, 1),
                      pool.submit(printed, root_study, args.replications, 2)]
        criteria = [pool.submit(criterion_rows, truth, max(1, args.replications // 4))
                    for truth in CRITERION_TRUTHS]
        searches = [pool.submit(search_rows, name, max(1, args.search_replications // 4))
                    for name in SEARCH_MODELS]
        print("".join(f.result() for f in thresholds), end="")
        print_criterion([f.result() for f in criteria])
        caps_study()
        print_search([f.result() for f in searches])
    print(f"\n(seed {SEED}, {args.replications} replications, "
          f"{args.search_replications} searched series, {args.jobs} processes, "
          f"{time.perf_counter() - started:.0f} s)")


if __name__ == "__main__":
    main()
