"""Diagnostics of one fitted model: coefficients, information criteria, residuals, roots.

:func:`fit_report` is the full report for the full-series fit; :func:`fold_fit_summary` is
the compact version cheap enough for every re-estimating fold. Both take the spec, its
:class:`~backtest.models.base.Fit`, the training data ``y`` exactly as passed to
``spec.fit`` (on the transformed scale) and the series' season length, and return
JSON-ready dictionaries. A section that a family cannot provide is ``None`` and
``unavailable`` maps its name to the reason.

Choices
-------
Covariance estimator (``covariance="approx"``, the default): the inverse of the numerical
(complex-step) Hessian of the log-likelihood at the estimates, statsmodels'
``cov_params_approx``. It is computed from the existing results without re-estimating
(measured at 10-15 % of the fit time for seasonal ARIMA models), and it reproduces the
widely reproduced exact-ML standard errors of the airline model [1]_ (0.0896 for theta,
0.0731 for Theta; recalled, not checked against a primary source), whereas statsmodels'
default outer product of gradients (``"opg"``) gives 0.0730 / 0.0963 there. ``"opg"``
is available as the cheaper alternative (already computed during an ARIMA fit). ETS uses
statsmodels' own covariance, which is the same numerical-Hessian estimator.

Wald tests: z = estimate / s.e. and a two-sided normal p-value for every coefficient,
including the constant and drift. The innovation variance gets its standard error but no
z or p-value: sigma2 = 0 lies on the boundary of the parameter space, where the Wald test
does not apply. Estimates at or near a bound of the parameter space keep their numbers
but carry a note, for the same reason: ETS smoothing and damping estimates within 1e-3 of
statsmodels' default range (smoothing 0..1, damping 0.8..0.98), and ARIMA AR or MA
coefficients whose lag polynomial has a root of modulus below 1.01 (the edge of the
stationary and invertible region). When the numerical Hessian gives a coefficient a
variance that is not positive (its curvature estimate is not positive: a flat or
ill-conditioned likelihood, not necessarily a bound), the standard error is unavailable
and the note says so; it adds the bound only for an estimate that is at one.

Information criteria are statsmodels': K counts every estimated parameter including the
innovation variance, N is the effective number of observations (n - d - D*m for ARIMA)
and AICc = AIC + 2K(K+1)/(N-K-1). They are comparable only between models with the same
differencing and transform.

Residual tests use :func:`~backtest.assessment.insample.one_step_errors` (the Kalman
residuals after the d + D*m burn-in for ARIMA), Ljung-Box at ``default_lags`` with
model_df = p + q + P + Q, ARCH LM with as many lags as the first default lag, and the
ACF/PACF up to the last default lag.

A fast fit (an arima or ets fit without statsmodels' results object) is assessed from the
compiled likelihood (:mod:`~backtest.assessment.compiled_fit`; the ``approx`` covariance
only): covariance, one-step errors and log-likelihood are the compiled ones, the criteria
follow statsmodels' definitions from that log-likelihood, convergence is the fit's
optimiser verdict; the covariance description, the residuals' source, the criteria's
convention and the estimation's reason say so.

Roots (ARIMA): the roots of each lag polynomial, regular in B and seasonal in B^m, with
modulus, from the estimates (statsmodels' ``polynomial_*`` convention). A root is "on or
inside" the unit circle when its modulus in B is at most 1 + 1e-6, and "near unit" when it
is below 1.01 (a common-practice threshold for rejecting such fits in stepwise order
searches [2]_; recalled, not checked against the source). For a seasonal root z in B^m
the modulus in B is |z|^(1/m), so a seasonal coefficient of 0.9 (|z| = 1.11,
1.11^(1/12) = 1.0088) is near unit.

References
----------
.. [1] Box, G. E. P. & Jenkins, G. M. (1976). *Time Series Analysis: Forecasting and
   Control*, rev. ed., Holden-Day, ch. 9 (the airline model).
.. [2] Hyndman, R. J. & Khandakar, Y. (2008). Automatic time series forecasting: the
   forecast package for R. *Journal of Statistical Software* 27(3), 1-22.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.polynomial import polynomial

from backtest.assessment import compiled_fit
from backtest.assessment._numbers import number
from backtest.assessment._tails import norm_sf
from backtest.assessment.insample import InSample, one_step_errors
from backtest.assessment.residual_tests import (
    acf_report,
    arch_lm,
    default_lags,
    jarque_bera,
    ljung_box,
)
from backtest.captured_warnings import capturing_warnings, distinct_warning_lines
from backtest.models.arima import ArimaSpec
from backtest.models.base import Fit, ModelSpec
from backtest.models.ets import EtsSpec
from backtest.models.fast_arima import coefficient_names

Covariance = Literal["approx", "opg"]
NEAR_UNIT_MODULUS = 1.01
UNIT_TOLERANCE = 1e-6
_VARIANCE_NAMES = frozenset({"sigma2"})
#: statsmodels' default ETS parameter box (smoothing in (0, 1), damping in [0.8, 0.98]).
_ETS_BOX = {"smoothing_level": (0.0, 1.0), "smoothing_trend": (0.0, 1.0),
            "smoothing_seasonal": (0.0, 1.0), "damping_trend": (0.8, 0.98)}
_BOUND_DISTANCE = 1e-3
_COVARIANCE_TEXT = {
    "approx": "inverse numerical (complex-step) Hessian of the log-likelihood",
    "opg": "outer product of the score vectors (gradients)",
}
_CONVENTION = ("statsmodels: K includes the innovation variance; "
               "AICc = AIC + 2K(K+1)/(N-K-1), N effective observations")
_COMPILED_LOGLIK = ("; log-likelihood of the compiled exact likelihood at the estimates (ARIMA: "
                    "of the differenced series, where statsmodels starts the differences "
                    "approximately diffuse)")


def fit_report(spec: ModelSpec, fit: Fit, y: np.ndarray, season_length: int, *,
               covariance: Covariance = "approx",
               fit_warnings: Sequence[str] = ()) -> dict[str, Any]:
    """Full diagnostic report for a fitted model of any family.

    Parameters
    ----------
    spec, fit : the model and its estimate on ``y``.
    y : training data as passed to ``spec.fit`` (transformed scale).
    season_length : the series' season length m.
    covariance : ``"approx"`` (numerical Hessian, default) or ``"opg"``.
    fit_warnings : warnings the caller captured while fitting; reported first, followed by
        any raised while this report is computed.

    Returns
    -------
    dict
        ``family``, ``label``, ``estimation`` (method, convergence), ``covariance``,
        ``coefficients`` (rows of name, estimate, std_error, z, p_value, note),
        ``information_criteria``, ``innovation_variance``, ``residuals`` (tests),
        ``roots`` (ARIMA), ``warnings`` and ``unavailable`` (section -> reason).
    """
    with capturing_warnings() as caught:
        report = _full_report(spec, fit, np.asarray(y, dtype=float), season_length, covariance)
    report["warnings"] = [*fit_warnings, *distinct_warning_lines(caught)]
    return report


def fold_fit_summary(spec: ModelSpec, fit: Fit, y: np.ndarray, season_length: int, *,
                     covariance: Covariance = "approx") -> dict[str, Any]:
    """Compact per-fold report: coefficient estimates, s.e. and p-values, convergence, and
    the Ljung-Box p-value at the first default lag.

    An arima or ets fit without statsmodels' results object (the fast estimator's) gets
    them from the compiled likelihood (:mod:`~backtest.assessment.compiled_fit`; the
    ``approx`` covariance only), its convergence from the fit's optimiser verdict.

    Returns
    -------
    dict
        ``converged`` (bool or None), ``params`` (name -> estimate, std_error, p_value),
        ``ljung_box`` (lag, p_value, reason, source: what the errors are),
        ``covariance`` (estimator, description; ``None`` without standard errors) and
        ``warnings`` raised while computing it.
    """
    with capturing_warnings() as caught:
        basis = _basis(spec, fit, y, season_length, covariance)
        test = _first_ljung_box(basis.errors, default_lags(season_length)[0])
    params = {row["name"]: {k: row[k] for k in ("estimate", "std_error", "p_value")}
              for row in basis.rows}
    return {"converged": basis.estimation["converged"], "params": params, "ljung_box": test,
            "covariance": basis.covariance, "warnings": list(distinct_warning_lines(caught))}


@dataclass(frozen=True)
class _Basis:
    """What both reports build on: coefficient rows, the covariance used (or the reason
    there is none), the one-step errors, the estimation record, and whether these come
    from the compiled likelihood."""

    rows: list[dict[str, Any]]
    covariance: dict[str, Any] | None
    covariance_reason: str | None
    errors: InSample
    estimation: dict[str, Any]
    compiled: bool


def _basis(spec: ModelSpec, fit: Fit, y: np.ndarray, season_length: int,
           covariance: Covariance) -> _Basis:
    """From the compiled likelihood for a fast fit under the ``approx`` covariance, else
    from statsmodels' results object (or the family's own numbers)."""
    if compiled_fit.compiles(spec, fit) and covariance == "approx":
        assert isinstance(spec, ArimaSpec | EtsSpec)  # what compiles() accepts
        variances, fixed = compiled_fit.variances(spec, fit, y, season_length)
        return _Basis(_rows(spec, fit, season_length, variances, None, fixed),
                      {"estimator": covariance, "description": compiled_fit.DESCRIPTION},
                      None, compiled_fit.one_step_errors(spec, fit, y, season_length),
                      _verdict(fit), True)
    rows, section, reason = coefficient_table(spec, fit, covariance, season_length)
    return _Basis(rows, section, reason, one_step_errors(spec, fit, y, season_length),
                  _estimation(spec, fit), False)


def _first_ljung_box(errors: InSample, lag: int) -> dict[str, Any]:
    if errors.errors is None:
        return {"lag": lag, "p_value": None, "reason": errors.note, "source": errors.note}
    row = ljung_box(errors.errors, [lag], errors.model_df)[0]
    return {"lag": lag, "p_value": row["p_value"], "reason": row["reason"],
            "source": errors.note}


def _full_report(spec: ModelSpec, fit: Fit, y: np.ndarray, season_length: int,
                 covariance: Covariance) -> dict[str, Any]:
    unavailable: dict[str, str] = {}
    basis = _basis(spec, fit, y, season_length, covariance)
    if basis.covariance_reason:
        unavailable["covariance"] = basis.covariance_reason
    criteria: dict[str, Any] | None
    if basis.compiled:
        assert isinstance(spec, ArimaSpec | EtsSpec)  # what compiles() accepts
        criteria = _information_criteria(*compiled_fit.likelihood(spec, fit, y, season_length),
                                         _CONVENTION + _COMPILED_LOGLIK)
    else:
        criteria = _criteria(spec, fit, unavailable)
    residuals = residual_section(basis.errors, season_length)
    if residuals is None:
        unavailable["residuals"] = basis.errors.note
    roots, roots_reason = _estimated_roots(spec, fit, season_length)
    if roots_reason:
        unavailable["roots"] = roots_reason
    return {"family": spec.family, "label": spec.label(season_length),
            "estimation": basis.estimation, "covariance": basis.covariance,
            "coefficients": basis.rows, "information_criteria": criteria,
            "innovation_variance": _innovation_variance(spec, fit, basis.errors),
            "residuals": residuals, "roots": roots, "unavailable": unavailable}


def coefficient_table(spec: ModelSpec, fit: Fit, covariance: Covariance, season_length: int
                      ) -> tuple[list[dict[str, Any]], dict[str, Any] | None, str | None]:
    """Rows of name, estimate, std_error, z, p_value, note; the covariance used; and the
    reason when there are no standard errors."""
    variances, reason = _coefficient_variances(spec, fit, covariance, len(fit.params))
    rows = _rows(spec, fit, season_length, variances, reason)
    section = None if reason else {"estimator": covariance,
                                   "description": _COVARIANCE_TEXT[covariance]}
    return rows, section, reason


def _rows(spec: ModelSpec, fit: Fit, season_length: int, variances: np.ndarray,
          reason: str | None, fixed: dict[str, str] | None = None) -> list[dict[str, Any]]:
    """The coefficient rows from the variances; ``fixed`` maps parameters that were not
    estimated to the note they get instead of a standard error."""
    bounds = estimates_at_bounds(spec, fit, season_length)
    fixed = fixed or {}
    return [_coefficient_row(name, float(estimate), variance, reason or fixed.get(name),
                             bounds.get(name))
            for (name, estimate), variance in zip(fit.params.items(), variances, strict=True)]


def estimates_at_bounds(spec: ModelSpec, fit: Fit, season_length: int) -> dict[str, str]:
    """Coefficients whose estimate is at or near a bound of the parameter space, each with
    the bound it is at.

    ETS: smoothing and damping within 1e-3 of statsmodels' default range. ARIMA: AR and MA
    coefficients whose lag polynomial (regular in B, seasonal in B^m) has a root of
    modulus below 1.01 in its own variable, on or near the unit circle that bounds the
    stationary and invertible region. Other families and coefficients have no such bound.
    """
    out = {}
    for name, (low, high) in _ETS_BOX.items() if spec.family == "ets" else ():
        estimate = fit.params.get(name)
        if estimate is not None and min(estimate - low, high - estimate) < _BOUND_DISTANCE:
            out[name] = ("at or near the bound of statsmodels' default parameter range "
                         f"[{low}, {high}]")
    roots, _ = _estimated_roots(spec, fit, season_length)
    if roots is not None:
        for name in fit.params:
            modulus = _smallest_modulus(roots, name)
            if modulus is not None and modulus < NEAR_UNIT_MODULUS:
                out[name] = ("at or near the stationarity/invertibility bound: its lag "
                             f"polynomial has a root of modulus {modulus:.4f}")
    return out


def _estimated_roots(spec: ModelSpec, fit: Fit, season_length: int
                     ) -> tuple[dict[str, Any] | None, str | None]:
    """The ARIMA lag-polynomial roots at the estimates, or the reason there are none."""
    if spec.family != "arima" or not isinstance(spec, ArimaSpec):
        return None, "lag-polynomial roots need a fitted ARIMA model"
    polynomials = lag_polynomials(spec, fit.params, season_length)
    if not _finite_polynomials(polynomials):
        return None, "lag polynomials have NaN or infinite coefficients"
    return arima_roots(polynomials, spec.season_period(season_length)), None


def _smallest_modulus(roots: dict[str, Any], name: str) -> float | None:
    """Smallest root modulus (in B, or in B^m for a seasonal polynomial) of the lag
    polynomial that the ARIMA coefficient ``name`` (``ar.L1``, ``ma.S.L12``, ...) belongs
    to; ``None`` for the constant, drift and variance."""
    for prefix, part, kind in (("ar.S.L", "ar", "seasonal"), ("ma.S.L", "ma", "seasonal"),
                               ("ar.L", "ar", "regular"), ("ma.L", "ma", "regular")):
        if name.startswith(prefix):
            moduli = [row["modulus"] for row in roots[part][kind] if row["modulus"] is not None]
            return min(moduli) if moduli else None
    return None


def _coefficient_variances(spec: ModelSpec, fit: Fit, covariance: Covariance, k: int
                           ) -> tuple[np.ndarray, str | None]:
    missing = np.full(k, np.nan)
    if spec.family not in ("arima", "ets"):
        return missing, f"the {spec.family} estimate comes without standard errors"
    if fit.raw is None:
        return missing, "the fitted-results object is not available"
    try:
        matrix = getattr(fit.raw, f"cov_params_{covariance}", None)
    except (np.linalg.LinAlgError, ValueError) as exc:
        return missing, f"covariance could not be computed: {exc}"
    if matrix is None:
        return missing, f"statsmodels offers no {covariance!r} covariance for {spec.family}"
    diagonal = np.diag(np.asarray(matrix, dtype=float))
    if len(diagonal) != k:
        return missing, "covariance matrix does not match the parameters"
    return diagonal, None


def _coefficient_row(name: str, estimate: float, variance: float, reason: str | None,
                     bound: str | None) -> dict[str, Any]:
    row: dict[str, Any] = {"name": name, "estimate": number(estimate), "std_error": None, "z": None,
           "p_value": None, "note": reason}
    if reason:
        return row
    if not (np.isfinite(variance) and variance > 0):
        row["note"] = ("standard error unavailable: the curvature estimate (numerical Hessian) "
                       f"is not positive for this coefficient (variance {variance:.3g})")
        if bound:
            row["note"] += f"; the estimate is {bound}"
        return row
    row["std_error"] = number(np.sqrt(variance))
    if name in _VARIANCE_NAMES:
        row["note"] = "variance: sigma2 = 0 is on the boundary, no Wald test"
        return row
    z = estimate / np.sqrt(variance)
    row.update(z=number(z), p_value=number(2.0 * norm_sf(abs(z))))
    if bound:
        row["note"] = f"{bound}: the Wald test is unreliable"
    return row


def _estimation(spec: ModelSpec, fit: Fit) -> dict[str, Any]:
    if spec.family in ("arima", "ets") and fit.raw is not None:
        retvals = getattr(fit.raw, "mle_retvals", None) or {}
        converged = retvals.get("converged")
        return {"method": "maximum likelihood",
                "converged": None if converged is None else bool(converged),
                "iterations": _count(retvals.get("iterations")),
                "function_calls": _count(retvals.get("fcalls")),
                "warnflag": _count(retvals.get("warnflag")),
                "reason": None if converged is not None else "optimizer reported no status"}
    method = {"theta": "two-step (OLS trend, exponential smoothing)",
              "benchmark": "closed form"}.get(spec.family, "unknown")
    return {"method": method, "converged": None, "iterations": None, "function_calls": None,
            "warnflag": None, "reason": "no iterative optimizer status for this estimate"}


def _verdict(fit: Fit) -> dict[str, Any]:
    """The estimation record of a fast fit: its optimiser's verdict, without counts."""
    return {"method": "maximum likelihood", "converged": fit.converged, "iterations": None,
            "function_calls": None, "warnflag": None,
            "reason": "the fast estimator's verdict (its iteration counts are not kept)"}


def _count(value: Any) -> int | None:
    return None if value is None else int(value)


def _criteria(spec: ModelSpec, fit: Fit, unavailable: dict[str, str]) -> dict[str, Any] | None:
    if spec.family not in ("arima", "ets"):
        unavailable["information_criteria"] = f"no likelihood for the {spec.family} estimate"
        return None
    if fit.raw is None:
        unavailable["information_criteria"] = "the fitted-results object is not available"
        return None
    raw = fit.raw
    return {"loglik": number(raw.llf), "aic": number(raw.aic), "aicc": number(raw.aicc),
            "bic": number(raw.bic), "n_parameters": int(raw.df_model),
            "nobs_effective": int(raw.nobs_effective), "convention": _CONVENTION}


def _information_criteria(loglik: float, k: int, n: int, convention: str) -> dict[str, Any]:
    """AIC = -2 l + 2K, AICc = AIC + 2K(K+1)/(N-K-1) (none when N - K - 1 <= 0) and
    BIC = -2 l + K log N, as statsmodels defines them (``statsmodels.tools.eval_measures``)
    for its state-space and ETS results."""
    aic = -2.0 * loglik + 2.0 * k
    aicc = aic + 2.0 * k * (k + 1) / (n - k - 1) if n - k - 1 > 0 else None
    return {"loglik": number(loglik), "aic": number(aic), "aicc": number(aicc),
            "bic": number(-2.0 * loglik + k * np.log(n)), "n_parameters": k,
            "nobs_effective": n, "convention": convention}


def _innovation_variance(spec: ModelSpec, fit: Fit, errors: InSample) -> dict[str, Any]:
    if "sigma2" in fit.params:
        value, source = fit.params["sigma2"], "estimated parameter sigma2"
    elif "sigma" in fit.params:
        value, source = fit.params["sigma"] ** 2, "square of the benchmark's residual s.d."
    elif errors.errors is not None and len(errors.errors):
        value, source = float(np.mean(errors.errors**2)), "mean squared one-step error"
    else:
        return {"value": None, "source": errors.note}
    return {"value": number(value), "source": source}


def residual_section(errors: InSample, season_length: int) -> dict[str, Any] | None:
    """Ljung-Box, Jarque-Bera, ARCH LM and ACF/PACF on the one-step errors."""
    if errors.errors is None:
        return None
    lags = default_lags(season_length)
    e = errors.errors
    return {"source": errors.note, "n": len(e), "model_df": errors.model_df,
            "ljung_box": ljung_box(e, lags, errors.model_df), "jarque_bera": jarque_bera(e),
            "arch_lm": arch_lm(e, lags[0]), "acf": acf_report(e, lags[-1])}


@dataclass(frozen=True)
class LagPolynomials:
    """An ARIMA model's lag polynomials as statsmodels' results hold them: coefficients in
    increasing powers of B, AR with the - sign and MA with the + sign, the seasonal ones in
    B with zeros between the seasonal lags."""

    polynomial_ar: np.ndarray
    polynomial_ma: np.ndarray
    polynomial_seasonal_ar: np.ndarray
    polynomial_seasonal_ma: np.ndarray


def lag_polynomials(spec: ArimaSpec, params: Mapping[str, float], season_length: int
                    ) -> LagPolynomials:
    """The lag polynomials of ``spec`` at the estimates ``params`` (statsmodels' names)."""
    period = spec.season_period(season_length) if spec.seasonal else 1

    def polynomial(names: list[str], sign: float, step: int) -> np.ndarray:
        coefficients = np.zeros(len(names) * step + 1)
        coefficients[0] = 1.0
        coefficients[step::step] = [sign * params[name] for name in names]
        return coefficients

    ar, ma, seasonal_ar, seasonal_ma = coefficient_names(spec, season_length)
    return LagPolynomials(polynomial(ar, -1.0, 1), polynomial(ma, 1.0, 1),
                          polynomial(seasonal_ar, -1.0, period),
                          polynomial(seasonal_ma, 1.0, period))


def arima_roots(raw: Any, period: int) -> dict[str, Any]:
    """Roots of the regular (in B) and seasonal (in B^m) AR and MA polynomials.

    ``raw`` holds ``polynomial_*`` attributes as statsmodels' ARIMA results do
    (:class:`LagPolynomials`): coefficients in increasing powers of B (MA with
    statsmodels' + sign).
    """
    out: dict[str, Any] = {"near_unit_modulus": NEAR_UNIT_MODULUS, "unit_tolerance": UNIT_TOLERANCE}
    for part in ("ar", "ma"):
        regular = _root_rows(getattr(raw, f"polynomial_{part}"), 1)
        seasonal_coefs = np.asarray(getattr(raw, f"polynomial_seasonal_{part}"))
        seasonal = _root_rows(seasonal_coefs[::period] if period > 1 else [1.0], period)
        moduli = [row["modulus_in_b"] for row in regular + seasonal]
        smallest = min(moduli) if moduli else None
        out[part] = {"regular": regular, "seasonal": seasonal,
                     "min_modulus_in_b": smallest,
                     "on_or_inside_unit_circle": bool(smallest is not None
                                                      and smallest <= 1.0 + UNIT_TOLERANCE),
                     "near_unit": bool(smallest is not None and smallest < NEAR_UNIT_MODULUS)}
    return out


def _finite_polynomials(raw: Any) -> bool:
    return all(np.all(np.isfinite(np.asarray(getattr(raw, f"polynomial_{name}"), dtype=float)))
               for name in ("ar", "ma", "seasonal_ar", "seasonal_ma"))


def _root_rows(coefficients: Any, power: int) -> list[dict[str, Any]]:
    coefs = np.trim_zeros(np.asarray(coefficients, dtype=float), "b")
    if len(coefs) < 2:
        return []
    roots = polynomial.polyroots(coefs)
    rows = []
    for root in sorted(roots, key=abs):
        modulus = float(abs(root))
        rows.append({"real": number(root.real), "imag": number(root.imag),
                     "modulus": number(modulus), "modulus_in_b": number(modulus ** (1 / power))})
    return rows
