"""Gaussian interval bounds for many forecast origins at once."""

from __future__ import annotations

import numpy as np

from backtest.models.base import Forecast, normal_bounds


def forecasts_by_origin(mean: np.ndarray, sd: np.ndarray, levels: tuple[int, ...]
                        ) -> list[Forecast]:
    """One :class:`Forecast` per row of ``mean`` and ``sd`` (shape ``(n_origins, horizon)``),
    with central intervals ``mean +/- z * sd``."""
    table = normal_bounds(mean, sd, levels)
    # Row views listed once: indexing a Python list is much cheaper than a 2-D array.
    lower = {lv: list(b) for lv, b in table.lower.items()}
    upper = {lv: list(b) for lv, b in table.upper.items()}
    return [Forecast(row, {lv: lower[lv][i] for lv in levels},
                     {lv: upper[lv][i] for lv in levels})
            for i, row in enumerate(table.mean)]
