"""Calibration of prediction intervals: Kupiec, Christoffersen and a three-zone verdict.

A *hit* is an actual inside its central interval (bounds included), a *miss* one outside.
The nominal miss rate of a level-L % interval is 1 - L/100.

Overlapping horizons. The h-step errors from origins fewer than h periods apart share
innovations, so for h greater than the spacing between origins their misses are
serially dependent by construction. The tests assume independent trials, so
:func:`calibration_report` treats them as formal only where the horizon is at most the
spacing (h = 1 with origins one period apart) and reports them for longer horizons, and
pooled over horizons, as descriptive, with ``formal`` false. Thinning to every h-th origin
was rejected: it throws away most of a short backtest's evidence.

References
----------
.. [1] Kupiec, P. H. (1995). Techniques for verifying the accuracy of risk measurement
   models. *Journal of Derivatives* 3(2), 73-84.
.. [2] Christoffersen, P. F. (1998). Evaluating interval forecasts. *International
   Economic Review* 39(4), 841-862.
.. [3] Basle Committee on Banking Supervision (1996). Supervisory framework for the use
   of "backtesting" in conjunction with the internal models approach to market risk
   capital requirements.
"""

from __future__ import annotations

import functools
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
from scipy import stats
from scipy.special import xlogy

from backtest.assessment._numbers import chi2_sf, number

#: Zone names, from fewest to most misses.
ZONES = ("consistent", "suspect", "excessive")
#: Binomial CDF levels at which the second and third zones start (Basel Committee 1996).
ZONE_LEVELS = (0.95, 0.9999)
_CDF_TOLERANCE = 1e-12
#: LR values this close count as equal in the exact p-value (rounding of equal LRs).
_LR_TOLERANCE = 1e-9


def _log_likelihood(count_one: float, count_zero: float, probability: float) -> float:
    """count_one * ln p + count_zero * ln(1 - p), with 0 * ln 0 = 0."""
    return float(xlogy(count_one, probability) + xlogy(count_zero, 1.0 - probability))


def kupiec_pof(misses: int, trials: int, nominal_miss_rate: float) -> dict[str, Any]:
    """Kupiec's proportion-of-failures likelihood-ratio test [1]_, with its exact p-value.

    LR = -2 ln[(1-p)^(T-x) p^x] + 2 ln[(1-p^)^(T-x) p^^x], p^ = x/T, with the convention
    0 ln 0 = 0. Two-sided: too few misses (intervals too wide) is rejected as well as too
    many. The p-value is P(LR(X) >= LR(x)) for X ~ Binomial(T, p), summed exactly over the
    T + 1 possible miss counts, not the chi-squared(1) approximation of the paper, which
    over-rejects at a few dozen trials (0 misses in 60 at p = 0.05: chi-squared 0.013,
    exact 0.076). The backtest's calibration and the ledger's coverage flag both use it.
    """
    x, t, p = int(misses), int(trials), float(nominal_miss_rate)
    _check_rate(p)
    out = {"misses": x, "trials": t, "nominal_miss_rate": p, "miss_rate": None, "lr": None,
           "p_value": None, "p_value_method": "exact binomial", "reason": None}
    if t < 1 or not 0 <= x <= t:
        out["reason"] = f"needs trials >= 1 and 0 <= misses <= trials (got {x} of {t})"
        return out
    lr, pmf = kupiec_null_distribution(t, p)
    tail = float(pmf[lr >= lr[x] - _LR_TOLERANCE].sum())
    out.update(miss_rate=x / t, lr=number(lr[x]), p_value=min(1.0, tail))
    return out


@functools.lru_cache(maxsize=1024)
def kupiec_null_distribution(trials: int, rate: float) -> tuple[np.ndarray, np.ndarray]:
    """Kupiec's LR for every miss count 0..trials, and that count's Binomial(trials, rate)
    probability. Cached: every horizon and candidate of a backtest asks for the same few."""
    x = np.arange(trials + 1, dtype=float)
    fitted = xlogy(x, x / trials) + xlogy(trials - x, 1.0 - x / trials)
    nominal = xlogy(x, rate) + xlogy(trials - x, 1.0 - rate)
    lr = np.maximum(2.0 * (fitted - nominal), 0.0)
    pmf = stats.binom.pmf(x, trials, rate)
    lr.setflags(write=False)
    pmf.setflags(write=False)
    return lr, pmf


def christoffersen(hit_sequence: Sequence[int] | np.ndarray,
                   nominal_miss_rate: float) -> dict[str, Any]:
    """Christoffersen's independence and conditional-coverage tests [2]_.

    ``hit_sequence`` holds 1 for a hit (actual inside the interval, the paper's I_t = 1)
    and 0 for a miss, in time order. The miss indicator follows a first-order Markov chain
    with P(miss | hit before) = pi_01 and P(miss | miss before) = pi_11.

    - LR_ind tests pi_01 = pi_11 (misses do not cluster), chi-squared(1).
    - LR_cc tests pi_01 = pi_11 = nominal miss rate, chi-squared(2).

    Choice: LR_cc is the single likelihood ratio of the paper, computed on the T - 1
    transitions (the first observation is conditioned on). It equals LR_uc + LR_ind
    exactly when LR_uc is Kupiec's statistic on observations 2..T, and that is the
    ``lr_uc`` reported here. Kupiec's test on all T observations is :func:`kupiec_pof`;
    adding it to LR_ind instead (as some software does) gives a slightly different LR_cc.
    The LR values do not change if hits and misses are coded the other way round.
    """
    p = float(nominal_miss_rate)
    _check_rate(p)
    hits = np.asarray(hit_sequence, dtype=float)
    if hits.ndim != 1 or not np.all((hits == 0) | (hits == 1)):
        raise ValueError("hit_sequence must be a one-dimensional sequence of 0s and 1s")
    miss = 1 - hits.astype(int)
    out: dict[str, Any] = {"n": len(miss), "transitions": None, "miss_after_hit": None,
           "miss_after_miss": None, "miss_rate": None, "lr_uc": None, "lr_ind": None,
           "lr_cc": None, "p_value_uc": None, "p_value_ind": None, "p_value_cc": None,
           "uc_observations": max(len(miss) - 1, 0), "reason": None}
    if len(miss) < 2:
        out["reason"] = "needs at least two observations"
        return out
    out.update(_markov_tests(miss, p))
    return out


def _markov_tests(miss: np.ndarray, p: float) -> dict[str, Any]:
    before, after = miss[:-1], miss[1:]
    n = {f"n{i}{j}": int(np.sum((before == i) & (after == j))) for i in (0, 1) for j in (0, 1)}
    from_hit, from_miss = n["n00"] + n["n01"], n["n10"] + n["n11"]
    pi01 = n["n01"] / from_hit if from_hit else 0.0
    pi11 = n["n11"] / from_miss if from_miss else 0.0
    misses, trials = n["n01"] + n["n11"], len(after)
    pi = misses / trials
    markov = (_log_likelihood(n["n01"], n["n00"], pi01)
              + _log_likelihood(n["n11"], n["n10"], pi11))
    single = _log_likelihood(misses, trials - misses, pi)
    nominal = _log_likelihood(misses, trials - misses, p)
    lr_uc, lr_ind = max(2 * (single - nominal), 0.0), max(2 * (markov - single), 0.0)
    lr_cc = max(2 * (markov - nominal), 0.0)
    return {"transitions": {"hit_hit": n["n00"], "hit_miss": n["n01"],
                            "miss_hit": n["n10"], "miss_miss": n["n11"]},
            "miss_after_hit": number(pi01) if from_hit else None,
            "miss_after_miss": number(pi11) if from_miss else None,
            "miss_rate": number(pi), "lr_uc": number(lr_uc), "lr_ind": number(lr_ind),
            "lr_cc": number(lr_cc), "p_value_uc": chi2_sf(lr_uc, 1),
            "p_value_ind": chi2_sf(lr_ind, 1), "p_value_cc": chi2_sf(lr_cc, 2)}


def zone_thresholds(trials: int, nominal_miss_rate: float) -> tuple[int, int]:
    """Miss counts at which the ``suspect`` and ``excessive`` zones start.

    The first k with P(X <= k) >= 95 % and the first with P(X <= k) >= 99.99 %,
    X ~ Binomial(trials, nominal miss rate) [3]_. For 250 trials at 1 % these are 5 and
    10 (zones 0-4, 5-9, 10+).
    """
    _check_rate(float(nominal_miss_rate))
    return _thresholds(int(trials), float(nominal_miss_rate))


@functools.lru_cache(maxsize=1024)
def _thresholds(trials: int, rate: float) -> tuple[int, int]:
    """Cached: every horizon and candidate of a backtest asks for the same few."""
    cdf = stats.binom.cdf(np.arange(trials + 1), trials, rate)
    starts = [int(np.searchsorted(cdf, level - _CDF_TOLERANCE)) for level in ZONE_LEVELS]
    return starts[0], starts[1]


def calibration_zone(misses: int, trials: int, nominal_miss_rate: float) -> str | None:
    """``consistent``, ``suspect`` or ``excessive``, by where ``misses`` falls.

    The scheme of the Basel Committee's 1996 backtesting framework [3]_ with our own zone
    names: fewer misses than the binomial 95 % point is ``consistent``; from there up to
    the 99.99 % point ``suspect``; beyond, ``excessive``. It is one-sided: intervals that
    are too wide (too few misses) stay ``consistent`` here and show up in Kupiec's
    two-sided test instead. ``None`` when there are no trials.
    """
    if int(trials) < 1:
        return None
    suspect, excessive = zone_thresholds(trials, nominal_miss_rate)
    if misses >= excessive:
        return ZONES[2]
    return ZONES[1] if misses >= suspect else ZONES[0]


def calibration_report(actuals: np.ndarray, lower: Mapping[int, np.ndarray],
                       upper: Mapping[int, np.ndarray], levels: Sequence[int], *,
                       origin_step: int = 1) -> list[dict[str, Any]]:
    """Interval calibration per level, per horizon and pooled over horizons.

    Parameters
    ----------
    actuals : folds x horizons array of actual values, folds in origin order; NaN where
        there is no actual or the fold failed.
    lower, upper : per level (in %), folds x horizons arrays of interval bounds.
    levels : the levels to report.
    origin_step : periods between successive origins; horizon h is tested formally only
        when h <= origin_step (no overlap, see the module notes).

    Returns
    -------
    list of dict
        Per level: ``level``, ``nominal_coverage``, ``by_horizon`` (one entry per horizon)
        and ``pooled``. Each entry has trials, hits, misses, coverage, nominal_coverage,
        ``kupiec``, ``christoffersen`` (``None`` when pooled: horizons have no common time
        order), ``zone``, ``formal`` and ``note``. Cells where the actual or a bound is
        missing are left out; the Markov transitions then join the neighbouring folds.
    """
    y = _matrix(actuals, "actuals")
    step = int(origin_step)
    if step < 1:
        raise ValueError(f"origin_step must be a positive integer, got {origin_step!r}")
    return [_level_report(y, _bounds(lower, level, y.shape, "lower"),
                          _bounds(upper, level, y.shape, "upper"), int(level), step)
            for level in levels]


def _matrix(values: object, what: str) -> np.ndarray:
    array = np.asarray(values, dtype=float)
    if array.ndim != 2:
        raise ValueError(f"{what} must be a folds x horizons array, got shape {array.shape}")
    return array


def _bounds(bounds: Mapping[int, np.ndarray], level: int, shape: tuple[int, ...],
            what: str) -> np.ndarray:
    if level not in bounds:
        raise ValueError(f"{what} has no bounds for level {level}")
    array = _matrix(bounds[level], f"{what}[{level}]")
    if array.shape != shape:
        raise ValueError(f"{what}[{level}] has shape {array.shape}, actuals {shape}")
    return array


def _level_report(y: np.ndarray, lo: np.ndarray, hi: np.ndarray, level: int,
                  step: int) -> dict[str, Any]:
    if not 0 < level < 100:
        raise ValueError(f"levels must be between 0 and 100 (in %), got {level}")
    rate = (100 - level) / 100.0
    valid = np.isfinite(y) & np.isfinite(lo) & np.isfinite(hi)
    hit = (lo <= y) & (y <= hi)
    by_horizon = []
    for h in range(1, y.shape[1] + 1):
        sequence = hit[valid[:, h - 1], h - 1].astype(int)
        note = None if h <= step else (f"horizon {h} > origin spacing {step}: overlapping "
                                       "forecasts, tests are descriptive")
        by_horizon.append({"horizon": h, **_cell(sequence, level, h <= step, note),
                           "christoffersen": christoffersen(sequence, rate)})
    single = y.shape[1] == 1
    note = None if single else "pooled over horizons: dependent trials, tests are descriptive"
    pooled = {**_cell(hit[valid].astype(int), level, single, note), "christoffersen": None}
    return {"level": level, "nominal_coverage": level / 100.0, "by_horizon": by_horizon,
            "pooled": pooled}


def _cell(hits: np.ndarray, level: int, formal: bool, note: str | None) -> dict[str, Any]:
    rate = (100 - level) / 100.0
    trials, n_hits = len(hits), int(hits.sum())
    misses = trials - n_hits
    return {"trials": trials, "hits": n_hits, "misses": misses,
            "coverage": number(n_hits / trials) if trials else None,
            "nominal_coverage": level / 100.0, "kupiec": kupiec_pof(misses, trials, rate),
            "zone": calibration_zone(misses, trials, rate), "formal": formal, "note": note}


def _check_rate(p: float) -> None:
    if not 0.0 < p < 1.0:
        raise ValueError(f"nominal_miss_rate must be strictly between 0 and 1, got {p}")
