"""The predictive distribution behind a candidate's folds, and its proper scores per fold.

A fold stores a point forecast and central interval bounds. Which distribution they come
from depends on the candidate:

- Gaussian families (ARIMA, additive-error ETS without multiplicative season, Theta,
  benchmarks) forecast N(mu, sd^2) on the transformed scale; the fold's bounds there are
  mu +/- z sd, so sd = (T(upper) - T(lower)) / (2 z) at the plan's lowest level and
  mu = T(point). Without a transform the CRPS is the closed form of a normal. Under a log
  or Box-Cox transform the distribution on the original scale is the back-transformed
  normal (skewed, not Gaussian); its CRPS is integrated over its quantile function,
  T^-1(mu + sd * Phi^-1(tau)), at ``QUANTILE_NODES`` midpoints. A Box-Cox quantile beyond
  the transform's range is infinite, and so is the CRPS (reported undefined).
- Empirical intervals (:mod:`backtest.recalibration`): at the horizons they cover, the
  distribution is the point forecast plus the sample of past errors that set the bounds,
  and the CRPS is that of the sample's empirical distribution (exact).
- Simulated intervals (multiplicative ETS): the CRPS of the empirical distribution of
  the simulated paths at each horizon (Gneiting & Raftery 2007, eq. 21, exact for the
  sample), computed while the fold is made (``FoldResult.sample_crps``); the paths are
  not kept. Where a fold has no such value (a combination whose members simulate, say)
  the CRPS is left undefined with a note; the pinball loss, which needs only the
  bounds, is given for every candidate.

The pinball loss is taken at the quantiles the plan's intervals give, tau = a/2 and
1 - a/2 for each level (a = 1 - level/100), for every candidate alike.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import stats

from backtest import metrics
from backtest.candidates import Candidate
from backtest.recalibration import EmpiricalIntervals, error_sample
from backtest.results import FoldResult
from backtest.transforms import Transform

QUANTILE_NODES = 1000
SIMULATED_NOTE = ("undefined: the intervals were simulated and no CRPS of the sample was "
                  "kept; see the pinball loss")


@dataclass(frozen=True)
class Predictive:
    """How a candidate's folds describe their predictive distribution."""

    transform: Transform = Transform()
    gaussian: bool = True
    empirical: EmpiricalIntervals | None = None
    step: int = 1


GAUSSIAN = Predictive()
"""A Gaussian forecast on the original scale, with the model's own intervals."""


def predictive_of(candidate: Candidate, step: int) -> Predictive:
    """The predictive form of ``candidate`` in a plan whose origins are ``step`` apart."""
    spec = candidate.spec
    return Predictive(spec.transform, spec.gaussian, candidate.intervals, step)


def quantile_levels(levels: Sequence[int]) -> list[tuple[int, float, str]]:
    """``(level, tau, "lower" | "upper")`` of every bound the plan's levels give."""
    out = []
    for level in levels:
        a = 1.0 - level / 100.0
        out += [(level, a / 2.0, "lower"), (level, 1.0 - a / 2.0, "upper")]
    return out


def pinball_by_level(folds: Sequence[FoldResult], levels: Sequence[int]
                     ) -> dict[int, np.ndarray]:
    """Per level, the mean pinball loss of its two bounds: folds x horizons (``folds``
    completed)."""
    actual = np.array([f.actuals for f in folds], dtype=float)
    out = {}
    for level in levels:
        a = 1.0 - level / 100.0
        lower = np.array([f.lower[level] for f in folds], dtype=float)
        upper = np.array([f.upper[level] for f in folds], dtype=float)
        out[level] = (metrics.pinball(lower, actual, a / 2.0)
                      + metrics.pinball(upper, actual, 1.0 - a / 2.0)) / 2.0
    return out


def crps_by_fold(folds: Sequence[FoldResult], predictive: Predictive,
                 levels: Sequence[int]) -> tuple[np.ndarray, str | None]:
    """CRPS of each completed fold (rows in the order of ``folds``) at each horizon; NaN
    where undefined, with a note saying why (``None`` if defined everywhere)."""
    done = [f for f in folds if f.status == "ok"]
    width = len(done[0].actuals) if done else 0
    out = np.full((len(done), width), np.nan)
    if not done:
        return out, None
    base = _model_crps(done, predictive, min(levels))
    note = SIMULATED_NOTE if not predictive.gaussian else None
    out[:] = base
    if predictive.empirical is not None:
        ordered = sorted(folds, key=lambda f: f.fold)
        row = {id(f): i for i, f in enumerate(done)}
        for position, fold in enumerate(ordered):
            if fold.status != "ok":
                continue
            for h in range(1, width + 1):
                errors = error_sample(ordered, position, h, predictive.step,
                                      predictive.empirical)
                if errors is None:
                    break
                out[row[id(fold)], h - 1] = metrics.crps_sample(
                    fold.point_forecast[h - 1] + errors, fold.actuals[h - 1])
    if note is None and not np.all(np.isfinite(out)):
        note = "undefined where a quantile lies beyond the Box-Cox transform's range"
    elif note is not None and np.all(np.isfinite(out)):
        note = None
    return out, note


def _model_crps(folds: Sequence[FoldResult], predictive: Predictive, level: int) -> np.ndarray:
    """CRPS of the model's own predictive distribution (for simulated ones, the folds'
    ``sample_crps``, NaN where a fold has none)."""
    actual = np.array([f.actuals for f in folds], dtype=float)
    if not predictive.gaussian:
        return np.array([f.sample_crps if f.sample_crps is not None
                         else (np.nan,) * actual.shape[1] for f in folds], dtype=float)
    t = predictive.transform
    z = stats.norm.ppf(0.5 + level / 200.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        mu = t.forward(np.array([f.point for f in folds], dtype=float))
        sd = (t.forward(np.array([f.upper[level] for f in folds], dtype=float))
              - t.forward(np.array([f.lower[level] for f in folds], dtype=float))) / (2.0 * z)
    if t.kind == "none":
        return metrics.crps_normal(mu, sd, actual)
    taus = (np.arange(QUANTILE_NODES) + 0.5) / QUANTILE_NODES
    with np.errstate(over="ignore", invalid="ignore"):
        quantiles = t.inverse(mu[..., None] + sd[..., None] * stats.norm.ppf(taus))
        crps = metrics.crps_quantiles(quantiles, actual)
    return np.where(np.isfinite(crps), crps, np.nan)
