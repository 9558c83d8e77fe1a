"""Small helpers that turn numerical results into JSON-ready values."""

from __future__ import annotations

import math
from typing import SupportsFloat

import numpy as np

from backtest.assessment import _tails


def number(value: SupportsFloat | None) -> float | None:
    """A Python float, or ``None`` when the value is missing, NaN or infinite."""
    if value is None:
        return None
    out = float(value)
    return out if math.isfinite(out) else None


def chi2_sf(statistic: float | None, df: int) -> float | None:
    """Upper-tail chi-squared probability, ``None`` for an undefined statistic."""
    if statistic is None or df <= 0:
        return None
    return number(_tails.chi2_sf(statistic, df))


def vector(values: object, what: str) -> np.ndarray:
    """A one-dimensional float array of finite values; the message names the argument."""
    array = np.asarray(values, dtype=float)
    if array.ndim != 1:
        raise ValueError(f"{what} must be one-dimensional, got shape {array.shape}")
    if not np.all(np.isfinite(array)):
        raise ValueError(f"{what} must contain only finite values")
    return array
