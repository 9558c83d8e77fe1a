"""The demo's invented later actuals: deterministic, and carrying each series on as it went."""

from __future__ import annotations

import numpy as np
import pytest

from backtest.demo import demo_series
from service.demo.ledger import MONTHS, later_actuals


def _continued(seed: int) -> dict[str, list[float]]:
    rng = np.random.default_rng(seed)
    return {s.key: later_actuals(s, MONTHS, rng) for s in demo_series()}


def test_the_later_actuals_are_the_same_for_the_same_seed_only():
    assert _continued(5) == _continued(5)
    assert _continued(5) != _continued(6)


@pytest.mark.parametrize("series", demo_series(), ids=lambda s: s.key)
def test_the_later_actuals_carry_on_from_the_same_months_a_year_earlier(series):
    later = np.array(later_actuals(series, MONTHS, np.random.default_rng(5)))
    year_before = np.asarray(series.values[-12:-12 + MONTHS])
    two_years_before = np.asarray(series.values[-24:-24 + MONTHS])
    growth = year_before.mean() / two_years_before.mean()

    assert len(later) == MONTHS and (later > 0).all()
    assert later.mean() == pytest.approx(year_before.mean() * growth, rel=0.15)
