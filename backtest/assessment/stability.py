"""Stability of a model's estimates across the re-estimating folds of a backtest."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from backtest.assessment._numbers import number

RANGE_FACTOR = 3.0


def summarise_folds(compact_reports: Sequence[dict[str, Any] | None],
                    params: Sequence[dict[str, Any] | None], *,
                    alpha: float = 0.05, range_factor: float = RANGE_FACTOR) -> dict[str, Any]:
    """Summarise per-fold fit summaries into significance shares, paths and flags.

    Parameters
    ----------
    compact_reports : per re-estimating fold, in origin order, the output of
        :func:`~backtest.assessment.fit_report.fold_fit_summary` (``None`` for a fold
        whose fit failed).
    params : the estimated parameters of the same folds, in the same order (``None`` for
        a failed fold); they give the parameter paths.
    alpha : significance level for the coefficient Wald tests and Ljung-Box.
    range_factor : k in the instability rule below.

    Returns
    -------
    dict
        ``n_folds``, ``share_converged``, ``ljung_box`` (lag, n_tested, share_rejected),
        ``coefficients`` (per name: path, n_tested, share_significant, min, max, range,
        median_std_error, range_in_std_errors, significant_sign_change, unstable, reason),
        ``unstable`` (names flagged) and ``rule``.

    Notes
    -----
    Instability rule (a heuristic of ours, not a formal test): a coefficient estimated at
    two or more folds is flagged when

    1. its range across origins, max - min, exceeds ``range_factor`` (3) times the median
       of its per-fold standard errors, or
    2. it is significant at ``alpha`` with a positive sign at one fold and with a negative
       sign at another.

    Successive rolling-origin windows share most of their data, so under a stable model
    the estimates move by a fraction of one standard error; three standard errors is a
    clear departure. With nearly disjoint windows the range of k independent estimates
    grows like 2 sqrt(2 ln k) standard errors (about 3.5 for k = 20), so the rule then
    flags more readily. Without standard errors rule 1 cannot be applied and the flag is
    ``None``. The innovation variance is treated like any other coefficient.
    """
    if len(compact_reports) != len(params):
        raise ValueError(f"compact_reports and params must have the same length "
                         f"({len(compact_reports)} != {len(params)})")
    reports = [r for r in compact_reports if r is not None]
    names = list(dict.fromkeys(n for p in params if p for n in p))
    coefficients = [_coefficient(name, compact_reports, params, alpha, range_factor)
                    for name in names]
    return {
        "n_folds": len(params),
        "alpha": alpha,
        "share_converged": _share([r.get("converged") for r in reports]),
        "ljung_box": _ljung_box(reports, alpha),
        "coefficients": coefficients,
        "unstable": [row["name"] for row in coefficients if row["unstable"]],
        "rule": f"range across origins > {range_factor:g} x median standard error, or "
                f"significant at {alpha:g} with both signs",
    }


def _share(flags: list[bool | None]) -> float | None:
    known = [bool(f) for f in flags if f is not None]
    return number(np.mean(known)) if known else None


def _ljung_box(reports: list[dict[str, Any]], alpha: float) -> dict[str, Any]:
    tests = [r.get("ljung_box") or {} for r in reports]
    p_values = [t.get("p_value") for t in tests]
    lags = [t.get("lag") for t in tests if t.get("lag") is not None]
    known = [p for p in p_values if p is not None]
    return {"lag": lags[0] if lags else None, "n_tested": len(known),
            "share_rejected": _share([p < alpha for p in known]) if known else None}


def _field(report: dict[str, Any] | None, name: str, key: str) -> float | None:
    if report is None:
        return None
    value: float | None = (report.get("params") or {}).get(name, {}).get(key)
    return value


def _coefficient(name: str, reports: Sequence[dict[str, Any] | None],
                 params: Sequence[dict[str, Any] | None], alpha: float,
                 range_factor: float) -> dict[str, Any]:
    path = [number(p.get(name)) if p else None for p in params]
    std_errors = [s for s in (_field(r, name, "std_error") for r in reports) if s is not None]
    tests = [(p, est) for p, est in ((_field(r, name, "p_value"), est)
                                     for r, est in zip(reports, path, strict=True))
             if p is not None and est is not None]
    values = [v for v in path if v is not None]
    significant_signs = {est > 0 for p, est in tests if p < alpha and est != 0}
    row = {"name": name, "path": path, "n_estimated": len(values), "n_tested": len(tests),
           "share_significant": _share([p < alpha for p, _ in tests]) if tests else None,
           "min": min(values, default=None), "max": max(values, default=None),
           "range": number(max(values) - min(values)) if values else None,
           "median_std_error": number(np.median(std_errors)) if std_errors else None,
           "range_in_std_errors": None,
           "significant_sign_change": significant_signs == {True, False},
           "unstable": None, "reason": None}
    row.update(_flag(row, range_factor))
    return row


def _flag(row: dict[str, Any], range_factor: float) -> dict[str, Any]:
    """The instability rule of :func:`summarise_folds`."""
    if row["n_estimated"] < 2:
        return {"reason": "estimated at fewer than two folds"}
    scale = row["median_std_error"]
    if scale is None or scale <= 0:
        return {"unstable": True if row["significant_sign_change"] else None,
                "reason": "no standard errors: the range rule cannot be applied"}
    return {"range_in_std_errors": number(row["range"] / scale),
            "unstable": bool(row["range"] > range_factor * scale
                             or row["significant_sign_change"])}
