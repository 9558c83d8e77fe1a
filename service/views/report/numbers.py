"""How numbers read in the report: fixed decimals, p-values, shares, missing values."""

from __future__ import annotations

MISSING = "–"


def fixed(value: float | None, digits: int = 3) -> str:
    """``value`` with ``digits`` decimals; a dash when undefined."""
    return MISSING if value is None else f"{value:.{digits}f}"


def p_value(value: float | None) -> str:
    """Three decimals, or ``< 0.001``."""
    if value is None:
        return MISSING
    return "< 0.001" if value < 0.001 else f"{value:.3f}"


def share(value: float | None, digits: int = 1) -> str:
    """A share in [0, 1] as a percentage."""
    return MISSING if value is None else f"{100 * value:.{digits}f} %"


def general(value: float | None) -> str:
    """Four significant digits, for estimates of any size."""
    return MISSING if value is None else f"{value:.4g}"


def verdict(value: bool | None, yes: str, no: str) -> str:
    """``yes``/``no`` for a boolean verdict, a dash when there is none."""
    return MISSING if value is None else (yes if value else no)


def interval(level: int, lower: float | None, upper: float | None, digits: int = 1) -> str:
    """One level's interval in one cell, e.g. ``80 %: 187.5 – 201.0``."""
    return f"{level} %: {fixed(lower, digits)} – {fixed(upper, digits)}"
