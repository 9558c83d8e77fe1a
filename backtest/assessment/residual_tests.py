"""Residual diagnostics: Ljung-Box, Jarque-Bera, Engle's ARCH LM, and the ACF/PACF.

Every function takes a one-dimensional array of residuals (already stripped of any
burn-in) and returns a JSON-ready dictionary; a value that is undefined for the input is
``None`` and ``reason`` says why.

References
----------
.. [1] Ljung, G. M. & Box, G. E. P. (1978). On a measure of lack of fit in time series
   models. *Biometrika* 65(2), 297-303.
.. [2] Jarque, C. M. & Bera, A. K. (1980). Efficient tests for normality,
   homoscedasticity and serial independence of regression residuals. *Economics
   Letters* 6(3), 255-259.
.. [3] Engle, R. F. (1982). Autoregressive conditional heteroscedasticity with estimates
   of the variance of United Kingdom inflation. *Econometrica* 50(4), 987-1007.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from scipy import stats

from backtest.assessment._numbers import chi2_sf, number, vector

#: Two-sided 95 % bound for a white-noise sample autocorrelation, in units of 1/sqrt(n).
ACF_BOUND_Z = 1.96


def default_lags(season_length: int) -> list[int]:
    """Ljung-Box lags: ``[m, 2m]`` for a seasonal series (m > 1), else ``[10]``."""
    m = int(season_length)
    return [m, 2 * m] if m > 1 else [10]


def autocorrelations(x: np.ndarray, nlags: int) -> np.ndarray | None:
    """Sample ACF r_1..r_nlags (demeaned, divisor n); ``None`` if ``x`` is constant."""
    centred = x - x.mean()
    denominator = float(centred @ centred)
    if denominator <= 0.0:
        return None
    n = len(x)
    return np.array([centred[k:] @ centred[: n - k] for k in range(1, nlags + 1)]) / denominator


def ljung_box(resid: object, lags: list[int], model_df: int) -> list[dict[str, Any]]:
    """Ljung-Box portmanteau test at each lag in ``lags``.

    Q(L) = n(n+2) sum_{k=1..L} r_k^2 / (n-k), referred to chi-squared with
    ``L - model_df`` degrees of freedom [1]_. For ARMA residuals ``model_df`` is
    p + q + P + Q; it changes only the degrees of freedom, never Q. A lag with no
    positive degrees of freedom gets Q but ``p_value`` ``None``.

    Returns
    -------
    list of dict
        One entry per lag: ``lag``, ``q``, ``df``, ``p_value``, ``reason``.
    """
    x = vector(resid, "resid")
    n = len(x)
    usable = [int(lag) for lag in lags if 1 <= int(lag) < n]
    r = autocorrelations(x, max(usable, default=0))
    return [_ljung_box_at(int(lag), x, r, int(model_df)) for lag in lags]


def _ljung_box_at(lag: int, x: np.ndarray, r: np.ndarray | None, model_df: int) -> dict[str, Any]:
    n, df = len(x), lag - model_df
    out: dict[str, Any] = {"lag": lag, "q": None, "df": df, "p_value": None, "reason": None}
    if not 1 <= lag < n:
        out["reason"] = f"lag {lag} needs 1 <= lag < n = {n}"
    elif r is None:
        out["reason"] = "residuals are constant: autocorrelations undefined"
    else:
        k = np.arange(1, lag + 1)
        out["q"] = number(n * (n + 2) * np.sum(r[:lag] ** 2 / (n - k)))
        if df <= 0:
            out["reason"] = (f"no degrees of freedom: lag {lag} <= {model_df} estimated "
                             "ARMA coefficients")
        else:
            out["p_value"] = chi2_sf(out["q"], df)
    return out


def jarque_bera(resid: object) -> dict[str, Any]:
    """Jarque-Bera normality test [2]_.

    JB = (n/6) [S^2 + (K-3)^2 / 4] with the moment (biased) skewness S and kurtosis K,
    referred to chi-squared(2).
    """
    x = vector(resid, "resid")
    out: dict[str, Any] = {"n": len(x), "skewness": None, "kurtosis": None, "statistic": None,
                           "df": 2, "p_value": None, "reason": None}
    centred = x - x.mean()
    variance = float(np.mean(centred**2))
    if len(x) < 3 or variance <= 0.0:
        out["reason"] = "needs at least 3 residuals that are not all equal"
        return out
    skew = float(np.mean(centred**3)) / variance**1.5
    kurt = float(np.mean(centred**4)) / variance**2
    statistic = len(x) / 6.0 * (skew**2 + (kurt - 3.0) ** 2 / 4.0)
    out.update(skewness=number(skew), kurtosis=number(kurt), statistic=number(statistic),
               p_value=chi2_sf(statistic, 2))
    return out


def arch_lm(resid: object, nlags: int) -> dict[str, Any]:
    """Engle's Lagrange-multiplier test for ARCH effects [3]_.

    Regress x_t^2 on a constant and x_{t-1}^2..x_{t-q}^2 over the n - q usable rows;
    LM = (n - q) R^2 ~ chi-squared(q). The residuals are not demeaned (as in Engle's test
    on model residuals and statsmodels' ``het_arch``). The F form of the same regression,
    F(q, n - 2q - 1), is reported too. Computed by ordinary least squares here rather than
    through ``het_arch``, whose return type is changing (statsmodels 0.15 warns).
    """
    x = vector(resid, "resid")
    q = int(nlags)
    rows = len(x) - q
    out: dict[str, Any] = {"nlags": q, "n_used": max(rows, 0), "lm": None, "lm_p_value": None,
                           "f": None, "f_df": [q, rows - q - 1], "f_p_value": None,
                           "reason": None}
    if q < 1 or rows - q - 1 < 1:
        out["reason"] = f"needs nlags >= 1 and n > 2 * nlags + 1 (n = {len(x)}, nlags = {q})"
        return out
    r_squared = _arch_r_squared(x**2, q)
    if r_squared is None:
        out["reason"] = "squared residuals are constant: R^2 undefined"
        return out
    f = (r_squared / q) / ((1.0 - r_squared) / (rows - q - 1))
    out.update(lm=number(rows * r_squared), lm_p_value=chi2_sf(rows * r_squared, q),
               f=number(f), f_p_value=number(stats.f.sf(f, q, rows - q - 1)))
    return out


def _arch_r_squared(squares: np.ndarray, q: int) -> float | None:
    n = len(squares)
    target = squares[q:]
    design = np.column_stack([np.ones(n - q)] + [squares[q - k: n - k] for k in range(1, q + 1)])
    coef = np.linalg.lstsq(design, target, rcond=None)[0]
    total = float(np.sum((target - target.mean()) ** 2))
    if total <= 0.0:
        return None
    return 1.0 - float(np.sum((target - design @ coef) ** 2)) / total


def acf_report(resid: object, nlags: int) -> dict[str, Any]:
    """Residual ACF and PACF at lags 1..nlags with the white-noise bound +/-1.96/sqrt(n).

    The ACF is demeaned with divisor n; the PACF comes from the Durbin-Levinson recursion
    on that ACF (statsmodels ``pacf(method="ldb")``, R's ``pacf``). ``nlags`` is capped at
    n - 1. ``acf_outside`` and ``pacf_outside`` list the lags whose value lies outside the
    bound; about 1 lag in 20 does so by chance.
    """
    x = vector(resid, "resid")
    n = len(x)
    lags = min(int(nlags), n - 1)
    out: dict[str, Any] = {"n": n, "nlags": lags, "acf": None, "pacf": None, "bound": None,
           "acf_outside": None, "pacf_outside": None, "reason": None}
    r = autocorrelations(x, lags) if lags >= 1 else None
    if r is None:
        out["reason"] = "needs at least 2 residuals that are not all equal"
        return out
    partial = partial_autocorrelations(r)
    bound = ACF_BOUND_Z / np.sqrt(n)
    out.update(acf=[number(v) for v in r], pacf=[number(v) for v in partial],
               bound=number(bound), acf_outside=_outside(r, bound),
               pacf_outside=_outside(partial, bound))
    return out


def partial_autocorrelations(r: np.ndarray) -> np.ndarray:
    """PACF at lags 1..len(r) from autocorrelations r_1.. by Durbin-Levinson."""
    pacf = np.zeros(len(r))
    phi = np.zeros(0)
    variance = 1.0
    for k in range(len(r)):
        reflection = (r[k] - phi @ r[:k][::-1]) / variance if k else r[0]
        phi = np.append(phi - reflection * phi[::-1], reflection)
        variance *= 1.0 - reflection**2
        pacf[k] = reflection
    return pacf


def _outside(values: np.ndarray, bound: float) -> list[int]:
    return [int(k) + 1 for k in np.flatnonzero(np.abs(values) > bound)]
