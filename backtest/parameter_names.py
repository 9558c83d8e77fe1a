"""Foldline's readable names for the estimated parameters of every family.

Fitted parameters keep the wrapped library's names (``ma.L1``, ``ma.S.L12``, ``sigma2``,
``smoothing_level`` ...) in every machine-readable output (JSON, CSV, the database), so
each value can be traced to the library's own output. Tables and charts for people show
:func:`readable` instead, e.g. "MA 1", "seasonal MA 1", "innovation variance".
"""

from __future__ import annotations

import re
from typing import Any

_FIXED = {
    "sigma2": "innovation variance",
    "sigma": "innovation standard deviation",
    "constant": "constant",
    "drift": "drift per period",
    "mean": "mean level",
    "b0": "trend slope",
    "alpha": "smoothing weight",
    "smoothing_level": "level smoothing",
    "smoothing_trend": "trend smoothing",
    "smoothing_seasonal": "season smoothing",
    "damping_trend": "trend damping",
    "initial_level": "starting level",
    "initial_trend": "starting trend",
    "deterministic": "deterministic term (0 none, 1 constant, 2 drift)",
}
_SEARCH = {"score": "criterion of the chosen model", "fitted": "orders fitted",
           "failed": "orders failed", "not_converged": "orders not converged",
           "near_unit_root": "orders near a unit root",
           "seasonal_strength": "seasonal strength"}
_LAGGED = re.compile(r"^(ar|ma)\.(S\.)?L(\d+)$")
_ORDER = {"p": "AR order p", "d": "differences d", "q": "MA order q", "P": "seasonal AR order P",
          "D": "seasonal differences D", "Q": "seasonal MA order Q", "period": "seasonal period"}


def readable(name: str, period: int | None = None) -> str:
    """The readable name of a library parameter name; unknown names are returned as they are.

    ``period`` turns a seasonal lag (``ma.S.L12``) into its seasonal order (seasonal MA 1).
    """
    if name in _FIXED:
        return _FIXED[name]
    lagged = _LAGGED.match(name)
    if lagged:
        kind, seasonal, lag = lagged.group(1).upper(), lagged.group(2), int(lagged.group(3))
        if not seasonal:
            return f"{kind} {lag}"
        if period and lag % period == 0:
            return f"seasonal {kind} {lag // period}"
        return f"seasonal {kind}, lag {lag}"
    if name.startswith("initial_seasonal."):
        return f"starting season {int(name.split('.')[1]) + 1}"
    if name.startswith("order.") and name[6:] in _ORDER:
        return _ORDER[name[6:]]
    if name.startswith("search.") and name[7:] in _SEARCH:
        return _SEARCH[name[7:]]
    return name


def seasonal_period(spec: dict[str, Any], season_length: int | None) -> int | None:
    """The seasonal period a canonical candidate spec uses: its own, else the series'."""
    seasonal = spec.get("seasonal")
    own = seasonal.get("period") if isinstance(seasonal, dict) else spec.get("period")
    return own or season_length
