"""The level-shift flag: a CUSUM of standardised one-step forecast errors.

The one-step errors of a well-specified model, divided by the standard deviation implied
by their issued interval, are independent N(0, 1); a level shift the model does not
follow makes them drift away from 0. The cumulative sums S_r = z_1 + ... + z_r of the n
standardised errors (origins in time order) are compared with the boundaries of Brown,
Durbin & Evans (1975), the straight lines through (0, +-a sqrt(n)) and (n, +-3a sqrt(n)):
the flag is raised when |S_r| > a (sqrt(n) + 2r / sqrt(n)) for some r, and ``first_period``
is the period of the first crossing. a solves their crossing-probability equation

    2 [1 - Phi(3a) + exp(-4a^2) Phi(a)] = false_alarm,

(a = 0.948 at 5 %, 1.143 at 1 %, 0.850 at 10 %). The equation is the probability that a
Brownian motion leaves the band, so on n discrete steps the false-alarm rate is at most
``false_alarm``. ``statistic`` is a* = max_r |S_r| / (sqrt(n) + 2r / sqrt(n)), the
smallest a the path crosses, and ``p_value`` the same equation at a*.

Here the errors are standardised by the issuing model's own uncertainty (the sd implied
by each issued one-step interval, (upper - lower) / (2 z), averaged over the levels),
not by the sample's, as Brown, Durbin & Evans do with recursive residuals: intervals that
are too narrow also make the CUSUM wander, which the coverage flag shows separately.
Under a transform the back-transformed interval is not symmetric and the implied sd is an
approximation. The rate is per evaluation: monitoring every month looks again at a
longer path, and the chance of some alarm over many looks is larger.
Fewer than :data:`MIN_LEVEL_SHIFT_OUTCOMES` usable errors: ``not_enough_data``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import optimize, stats

from backtest.ledger.flag import Flag, not_enough_data, tested
from backtest.ledger.issue import IssuedForecast
from backtest.ledger.outcomes import Outcome

MIN_LEVEL_SHIFT_OUTCOMES = 6


@dataclass(frozen=True)
class CusumTest:
    """The CUSUM of n standardised errors: a*, its p-value and the first crossing (0-based)."""

    a_star: float
    p_value: float
    first_crossing: int | None


def crossing_probability(a: float) -> float:
    """Brown, Durbin & Evans' (1975) probability that |S| leaves the band of constant a."""
    a = float(a)
    tail = 1.0 - stats.norm.cdf(3.0 * a) + math.exp(-4.0 * a * a) * stats.norm.cdf(a)
    return float(min(1.0, 2.0 * tail))


@lru_cache(maxsize=32)
def boundary_constant(false_alarm: float) -> float:
    """The constant a whose crossing probability is ``false_alarm``."""
    return float(optimize.brentq(lambda a: crossing_probability(a) - false_alarm, 0.1, 10.0,
                                 xtol=1e-12))


def cusum_test(z: Sequence[float], false_alarm: float) -> CusumTest:
    """The CUSUM of ``z`` with its boundary at ``false_alarm``."""
    values = np.asarray(z, dtype=float)
    n = len(values)
    r = np.arange(1, n + 1)
    shape = math.sqrt(n) + 2.0 * r / math.sqrt(n)
    excursion = np.abs(np.cumsum(values)) / shape
    outside = np.flatnonzero(excursion > boundary_constant(false_alarm))
    a_star = float(np.max(excursion))
    return CusumTest(a_star, crossing_probability(a_star),
                     int(outside[0]) if len(outside) else None)


def implied_sd(issued: IssuedForecast, horizon: int) -> float:
    """The forecast sd implied by the issued intervals at ``horizon``, mean over levels."""
    sds = [(issued.upper[lv][horizon - 1] - issued.lower[lv][horizon - 1])
           / (2.0 * _normal_quantile(0.5 + lv / 200.0)) for lv in issued.levels]
    return float(np.mean(sds))


@lru_cache(maxsize=128)
def _normal_quantile(probability: float) -> float:
    return float(stats.norm.ppf(probability))


def level_shift_flag(one_step: Sequence[tuple[IssuedForecast, Outcome]],
                     false_alarm: float) -> Flag:
    """The level-shift verdict on (forecast, one-step outcome) pairs in time order."""
    usable = [(o.period, o.error / sd) for f, o in one_step
              if math.isfinite(sd := implied_sd(f, 1)) and sd > 0]
    if len(usable) < MIN_LEVEL_SHIFT_OUTCOMES:
        return not_enough_data("level_shift", f"{len(usable)} standardised one-step "
                               f"error(s); the CUSUM needs at least {MIN_LEVEL_SHIFT_OUTCOMES}",
                               len(usable), MIN_LEVEL_SHIFT_OUTCOMES)
    periods = [p for p, _ in usable]
    test = cusum_test([z for _, z in usable], false_alarm)
    first = None if test.first_crossing is None else periods[test.first_crossing]
    a = boundary_constant(false_alarm)
    verdict = (f"crosses the boundary (a = {a:.3f}) first at {first}" if first
               else f"stays inside the boundary (a = {a:.3f})")
    skipped = len(one_step) - len(usable)
    note = f"; {skipped} without a finite interval left out" if skipped else ""
    return Flag(rule="level_shift", state=tested(first is not None), level=None,
                statistic=test.a_star, p_value=test.p_value, threshold=false_alarm,
                first_period=first,
                detail=f"CUSUM of {len(usable)} standardised one-step errors {verdict}; "
                       f"a* = {test.a_star:.3f}, p {test.p_value:.3g}{note}",
                outcomes=len(usable), needed=MIN_LEVEL_SHIFT_OUTCOMES)
