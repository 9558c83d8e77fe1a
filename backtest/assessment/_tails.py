"""Tail probabilities of one statistic, without the array machinery of ``scipy.stats``.

A series' evidence needs thousands of single p-values (every Diebold-Mariano test and
calibration cell); ``scipy.stats`` distributions spend most of each call checking and
broadcasting arguments. Inside the support these functions call the same
``scipy.special`` routine that ``scipy.stats`` calls (``chi2.sf`` is ``chdtrc``, ``t.sf``
and ``t.cdf`` are ``stdtr``, ``norm.sf`` is ``ndtr`` of the negated statistic), so the
values are identical to the last bit; edge cases (non-finite statistics, the support's
boundary, invalid degrees of freedom) are left to ``scipy.stats`` itself.
"""

from __future__ import annotations

import math

from scipy import special, stats


def chi2_sf(statistic: float, df: float) -> float:
    """P(X > statistic) for X ~ chi-squared(df); equals ``scipy.stats.chi2.sf``."""
    if not (math.isfinite(statistic) and statistic > 0 and df > 0):
        return float(stats.chi2.sf(statistic, df))
    return float(special.chdtrc(df, statistic))


def norm_sf(statistic: float) -> float:
    """P(Z > statistic) for a standard normal Z; equals ``scipy.stats.norm.sf``."""
    if not math.isfinite(statistic):
        return float(stats.norm.sf(statistic))
    return float(special.ndtr(-statistic))


def t_sf(statistic: float, df: float) -> float:
    """P(T > statistic) for Student's T with ``df`` degrees of freedom; equals
    ``scipy.stats.t.sf``."""
    if not (math.isfinite(statistic) and df > 0):
        return float(stats.t.sf(statistic, df))
    return float(special.stdtr(df, -statistic))


def t_cdf(statistic: float, df: float) -> float:
    """P(T <= statistic) for Student's T with ``df`` degrees of freedom; equals
    ``scipy.stats.t.cdf``."""
    if not (math.isfinite(statistic) and df > 0):
        return float(stats.t.cdf(statistic, df))
    return float(special.stdtr(df, statistic))
