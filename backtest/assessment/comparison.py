"""Forecast comparison: Diebold-Mariano with the HLN correction, and the model confidence set.

Errors are actual minus forecast, folds x horizons per model, folds in origin order, NaN
where a fold failed. Each comparison uses the folds where both models have an error.

References
----------
.. [1] Diebold, F. X. & Mariano, R. S. (1995). Comparing predictive accuracy. *Journal of
   Business & Economic Statistics* 13(3), 253-263.
.. [2] Harvey, D., Leybourne, S. & Newbold, P. (1997). Testing the equality of prediction
   mean squared errors. *International Journal of Forecasting* 13(2), 281-291.
.. [3] Hansen, P. R., Lunde, A. & Nason, J. M. (2011). The model confidence set.
   *Econometrica* 79(2), 453-497.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from itertools import combinations
from typing import Any, Literal, TypeVar

import numpy as np
import pandas as pd
from arch.bootstrap import MCS
from scipy import special

from backtest.assessment._numbers import number, vector
from backtest.assessment._tails import norm_sf, t_cdf, t_sf

Loss = Literal["squared", "absolute"]
LOSSES: tuple[Loss, ...] = ("squared", "absolute")
_LOSS_FUNCTIONS = {"squared": np.square, "absolute": np.abs}
T = TypeVar("T")
#: Long-run variances at most this fraction of mean(d^2) count as zero (constant d).
_DEGENERATE = 1e-12


def diebold_mariano(e1: object, e2: object, horizon: int, loss: Loss = "squared") -> dict[str, Any]:
    """Diebold-Mariano test of equal accuracy with the Harvey-Leybourne-Newbold correction.

    d_t = g(e1_t) - g(e2_t); the long-run variance of d is gamma_0 + 2 sum_{k=1..h-1}
    gamma_k (autocovariances with divisor T, rectangular kernel, h - 1 lags [1]_);
    DM = mean(d) / sqrt(V / T) ~ N(0, 1). HLN [2]_: DM* = DM sqrt((T + 1 - 2h +
    h(h-1)/T) / T), referred to Student's t with T - 1 degrees of freedom; ``p_value`` is
    its two-sided p-value and ``p_value_first_better`` the one-sided p-value against
    "the first model is more accurate" (mean d < 0).

    Rule when V <= 0 (possible for h > 1): the variance is recomputed with Bartlett
    weights 1 - k/h on the same h - 1 lags (Newey-West), which is never negative, and
    ``kernel`` says ``"bartlett"``; the HLN factor is still applied. If that variance is
    zero too (d constant) the statistic is ``None`` with a reason.

    Parameters
    ----------
    e1, e2 : forecast errors of the two models at the same origins, in origin order.
    horizon : forecast horizon h >= 1 (in units of the spacing between origins).
    loss : ``"squared"`` or ``"absolute"``.
    """
    a, b = vector(e1, "e1"), vector(e2, "e2")
    if a.shape != b.shape:
        raise ValueError(f"e1 and e2 must have the same length ({len(a)} != {len(b)})")
    h = int(horizon)
    if h < 1:
        raise ValueError(f"horizon must be a positive integer, got {horizon!r}")
    if loss not in _LOSS_FUNCTIONS:
        raise ValueError(f"loss must be one of {', '.join(LOSSES)}, got {loss!r}")
    d = _LOSS_FUNCTIONS[loss](a) - _LOSS_FUNCTIONS[loss](b)
    return _tests([(d, h, loss)])[0]


def _tests(differentials: Sequence[tuple[np.ndarray, int, Loss]]) -> list[dict[str, Any]]:
    """:func:`diebold_mariano` of many loss differentials ``(d, h, loss)``, in order.

    Tests of the same h and length T are computed together, one row per test, with each
    row's arithmetic (sums, BLAS dot products, special functions) that of a single test,
    so the figures do not depend on how the tests are batched."""
    out: list[dict[str, Any]] = []
    batches: dict[tuple[int, int], list[int]] = {}
    for i, (d, h, loss) in enumerate(differentials):
        out.append({"horizon": h, "loss": loss, "n": len(d), "mean_difference": None,
                    "variance": None, "kernel": None, "dm": None, "p_value_normal": None,
                    "hln": None, "df": len(d) - 1, "p_value": None,
                    "p_value_first_better": None, "reason": None})
        if len(d) <= h:
            out[i]["reason"] = f"needs more than h = {h} paired errors, got {len(d)}"
        else:
            batches.setdefault((h, len(d)), []).append(i)
    for (h, _), rows in batches.items():
        found = _statistics(np.array([differentials[i][0] for i in rows]), h)
        for i, statistics in zip(rows, found):
            out[i].update(statistics)
    return out


def _autocovariances(d: np.ndarray, lags: int) -> np.ndarray:
    """Per row of ``d`` (tests x T), the autocovariances at lags 0..``lags``: tests x lags+1.

    Each is a matmul of one row's vectors, numpy's path for a single ``x @ y``."""
    n = d.shape[1]
    centred = d - d.mean(axis=1)[:, None]
    gamma = np.empty((len(d), lags + 1))
    for k in range(lags + 1):
        gamma[:, k] = (centred[:, None, k:] @ centred[:, : n - k, None])[:, 0, 0] / n
    return gamma


def _statistics(d: np.ndarray, h: int) -> list[dict[str, Any]]:
    """The DM and HLN statistics of each row of ``d`` (tests x T, T > h)."""
    n = d.shape[1]
    means = d.mean(axis=1)
    gamma = _autocovariances(d, h - 1)
    variance = gamma[:, 0] + 2.0 * np.ascontiguousarray(gamma[:, 1:]).sum(axis=1)
    floor = _DEGENERATE * np.mean(d**2, axis=1)
    kernel = np.where(variance <= floor, "bartlett", "rectangular")
    weights = 1.0 - np.arange(1, h) / h
    for i in np.flatnonzero(variance <= floor).tolist():
        variance[i] = gamma[i, 0] + 2.0 * (weights @ np.ascontiguousarray(gamma[i, 1:]))
    factor = (n + 1 - 2 * h + h * (h - 1) / n) / n
    defined = variance > floor
    with np.errstate(divide="ignore", invalid="ignore"):
        dm = means / np.sqrt(np.where(defined, variance, np.nan) / n)
        hln = dm * math.sqrt(max(factor, 0.0))
    tails = _tails_of(dm, hln, n - 1)
    out = []
    for i in range(len(d)):
        row: dict[str, Any] = {"mean_difference": number(means[i]),
                               "variance": number(variance[i]), "kernel": str(kernel[i])}
        if not defined[i]:
            row["reason"] = "the loss differential is constant: no variance"
            out.append(row)
            continue
        row.update(dm=number(dm[i]), p_value_normal=number(2.0 * tails[0][i]))
        if factor <= 0:
            row["reason"] = f"HLN correction undefined for T = {n}, h = {h}"
        else:
            row.update(hln=number(hln[i]), p_value=number(2.0 * tails[1][i]),
                       p_value_first_better=number(tails[2][i]))
        out.append(row)
    return out


def _tails_of(dm: np.ndarray, hln: np.ndarray, df: int) -> tuple[np.ndarray, ...]:
    """P(Z > |dm|), P(T > |hln|) and P(T <= hln) per test: the special functions of
    :mod:`backtest.assessment._tails` on arrays, its scalar forms where not finite."""
    normal, upper, lower = (special.ndtr(-np.abs(dm)), special.stdtr(df, -np.abs(hln)),
                            special.stdtr(df, hln))
    for i in np.flatnonzero(~(np.isfinite(dm) & np.isfinite(hln))).tolist():
        if not np.isnan(dm[i]):
            normal[i] = norm_sf(abs(dm[i]))
            upper[i], lower[i] = t_sf(abs(hln[i]), df), t_cdf(hln[i], df)
    return normal, upper, lower


def compare_to_benchmark(errors: Mapping[str, np.ndarray], benchmark: str, *,
                         losses: Sequence[Loss] = LOSSES, alpha: float = 0.05,
                         origin_step: int = 1) -> dict[str, Any]:
    """DM/HLN tests of every model against ``benchmark``, per horizon and loss.

    A row's ``verdict`` is ``"better"`` or ``"worse"`` when the two-sided HLN p-value is
    below ``alpha`` (the sign of the mean loss difference deciding which), else
    ``"no_difference"``; ``None`` when the test is undefined. Horizon h uses
    ceil(h / origin_step) as the DM horizon: the number of origin spacings the
    overlapping forecasts span. ``summary`` lists per model and loss the horizons where
    it is better or worse.
    """
    matrices = _matrices(errors)
    if benchmark not in matrices:
        raise ValueError(f"benchmark {benchmark!r} is not among the errors' models")
    names = [n for n in matrices if n != benchmark]
    rows = [{"model": name, **row, "verdict": _verdict(row["test"], alpha, "better", "worse")}
            for name, row in _pair_rows([(matrices[n], matrices[benchmark]) for n in names],
                                        names, losses, origin_step)]
    return {"benchmark": benchmark, "alpha": alpha, "origin_step": origin_step, "rows": rows,
            "summary": _summary(rows, names, losses)}


def pairwise(errors: Mapping[str, np.ndarray], *, losses: Sequence[Loss] = LOSSES,
             alpha: float = 0.05, origin_step: int = 1) -> dict[str, Any]:
    """DM/HLN tests for every pair of models, per horizon and loss.

    ``verdict`` is ``"first_better"``, ``"second_better"`` or ``"no_difference"`` by the
    same two-sided rule as :func:`compare_to_benchmark`. No multiplicity correction: for a
    joint statement about many models use :func:`model_confidence_set`.
    """
    matrices = _matrices(errors)
    pairs = list(combinations(matrices, 2))
    rows = [{"first": first, "second": second, **row,
             "verdict": _verdict(row["test"], alpha, "first_better", "second_better")}
            for (first, second), row in _pair_rows(
                [(matrices[a], matrices[b]) for a, b in pairs], pairs, losses, origin_step)]
    return {"alpha": alpha, "origin_step": origin_step, "rows": rows}


def _matrices(errors: Mapping[str, np.ndarray]) -> dict[str, np.ndarray]:
    matrices = {str(name): np.asarray(values, dtype=float) for name, values in errors.items()}
    shapes = {m.shape for m in matrices.values()}
    if len(matrices) < 2 or len(shapes) != 1 or len(next(iter(shapes))) != 2:
        raise ValueError("errors must map at least two models to folds x horizons arrays "
                         f"of one shape, got shapes {sorted(shapes)}")
    return matrices


def _pair_rows(pairs: Sequence[tuple[np.ndarray, np.ndarray]], tags: Sequence[T],
               losses: Sequence[Loss], origin_step: int) -> list[tuple[T, dict[str, Any]]]:
    """Per pair of error matrices (with its tag), horizon and loss, the tag and a row
    holding the DM test on the folds where both have an error; all tests computed
    together (:func:`_tests`)."""
    if int(origin_step) < 1:
        raise ValueError(f"origin_step must be a positive integer, got {origin_step!r}")
    heads, differentials = [], []
    for (first, second), tag in zip(pairs, tags):
        both = np.isfinite(first) & np.isfinite(second)
        with np.errstate(invalid="ignore"):
            by_loss = {loss: (_LOSS_FUNCTIONS[loss](first) - _LOSS_FUNCTIONS[loss](second)).T
                       for loss in losses}
        for h in range(1, first.shape[1] + 1):
            for loss in losses:
                heads.append((tag, h, loss))
                differentials.append((by_loss[loss][h - 1][both[:, h - 1]],
                                      math.ceil(h / int(origin_step)), loss))
    tests = _tests(differentials)
    return [(tag, {"horizon": h, "loss": loss, "test": test})
            for (tag, h, loss), test in zip(heads, tests)]


def _verdict(test: dict[str, Any], alpha: float, better: str, worse: str) -> str | None:
    if test["p_value"] is None:
        return None
    if test["p_value"] >= alpha:
        return "no_difference"
    return better if test["mean_difference"] < 0 else worse


def _summary(rows: list[dict[str, Any]], names: list[str],
             losses: Sequence[Loss]) -> dict[str, Any]:
    summary: dict[str, dict[str, dict[str, list[int]]]] = {
        name: {loss: {"better_at": [], "worse_at": []} for loss in losses}
               for name in names}
    for row in rows:
        if row["verdict"] in ("better", "worse"):
            summary[row["model"]][row["loss"]][f"{row['verdict']}_at"].append(row["horizon"])
    return summary


def model_confidence_set(losses: np.ndarray, names: Sequence[str], *, size: float = 0.10,
                         reps: int = 1000, block_size: int | None = None,
                         seed: int | np.random.Generator | None = None,
                         method: Literal["R", "max"] = "R") -> dict[str, Any]:
    """Hansen-Lunde-Nason model confidence set [3]_ via ``arch.bootstrap.MCS``.

    Parameters
    ----------
    losses : T x k array of per-origin losses (rows with any NaN are dropped).
    names : the k model names, in column order.
    size : test size; the set has confidence 1 - size.
    reps : bootstrap replications.
    block_size : mean block length of the stationary bootstrap; default int(sqrt(T)),
        arch's own default, resolved here so it is recorded.
    seed : an int, a Generator, or ``None`` (a fresh int seed is drawn and recorded, so
        the run can be repeated).
    method : ``"R"`` (range statistic, default) or ``"max"``.

    Returns
    -------
    dict
        ``included`` and ``excluded`` names (excluded in elimination order), ``p_values``
        (name -> MCS p-value), ``ties`` (groups of models with identical losses: the set is
        computed over the first of each group and the others share its verdict and p-value;
        when all are tied all are included with p-value 1), and the settings used: size,
        method, bootstrap, reps, block_size, seed (``None`` for a caller's Generator), n,
        rows_dropped.
    """
    matrix, labels = _validate_mcs(losses, names)
    kept = matrix[np.all(np.isfinite(matrix), axis=1)]
    if len(kept) < 2:
        raise ValueError("losses must have at least two rows without NaN")
    block = int(block_size) if block_size is not None else int(np.sqrt(len(kept)))
    if seed is None:
        seed = int(np.random.SeedSequence().generate_state(1)[0])
    recorded = None if isinstance(seed, np.random.Generator) else int(seed)
    tied = _tied_columns(kept)
    distinct = [labels[j] for j in sorted(set(tied.values()))]
    if len(distinct) == 1:
        included, excluded, p = list(labels), [], dict.fromkeys(labels, 1.0)
    else:
        columns = sorted(set(tied.values()))
        mcs = MCS(pd.DataFrame(kept[:, columns], columns=distinct), size=size, reps=int(reps),
                  block_size=block, method=method, bootstrap="stationary", seed=seed)
        mcs.compute()
        first = mcs.pvalues.iloc[:, 0]
        p = {n: float(first[labels[tied[j]]]) for j, n in enumerate(labels)}
        kept_names = set(mcs.included)
        included = [n for j, n in enumerate(labels) if labels[tied[j]] in kept_names]
        excluded = [n for e in mcs.excluded for j, n in enumerate(labels)
                    if labels[tied[j]] == e]
    return {"included": included, "excluded": excluded,
            "p_values": {n: number(p[n]) for n in labels},
            "ties": [[labels[j] for j in tied if tied[j] == r] for r in sorted(set(tied.values()))
                     if sum(v == r for v in tied.values()) > 1],
            "size": size, "method": method, "bootstrap": "stationary", "reps": int(reps),
            "block_size": block,
            "seed": recorded,
            "n": len(kept), "rows_dropped": len(matrix) - len(kept)}


def _tied_columns(matrix: np.ndarray) -> dict[int, int]:
    """Column -> the first column with exactly the same losses (itself if none).

    Models with identical losses cannot be told apart and make the bootstrap's variance of
    their difference zero (``arch`` then fails), so the set is computed over one model of
    each tie and every tied model shares its verdict and p-value."""
    out: dict[int, int] = {}
    for j in range(matrix.shape[1]):
        out[j] = next(r for r in range(j + 1) if np.array_equal(matrix[:, r], matrix[:, j]))
    return out


def _validate_mcs(losses: np.ndarray, names: Sequence[str]) -> tuple[np.ndarray, list[str]]:
    matrix = np.asarray(losses, dtype=float)
    labels = [str(n) for n in names]
    if matrix.ndim != 2 or matrix.shape[1] < 2:
        raise ValueError(f"losses must be a T x k array with k >= 2, got shape {matrix.shape}")
    if len(labels) != matrix.shape[1] or len(set(labels)) != len(labels):
        raise ValueError(f"names must be {matrix.shape[1]} distinct names, got {labels}")
    return matrix, labels
