"""The scalar tail probabilities equal scipy.stats' to the last bit, edge cases included."""

import math

import numpy as np
import pytest
from scipy import stats

from backtest.assessment._tails import chi2_sf, norm_sf, t_cdf, t_sf

STATISTICS = [*np.linspace(-40, 40, 161), -1e-300, 0.0, -0.0, 1e-300, 1e-8, 3.84, 700.0,
              math.inf, -math.inf, math.nan]
DEGREES = [1, 2, 3, 7, 23, 35.5, 1000, 0, -1, math.nan]


def _same(ours: float, reference: float) -> bool:
    return (math.isnan(ours) and math.isnan(reference)) or ours == reference


@pytest.mark.parametrize("df", DEGREES)
def test_chi2_and_t_equal_scipy_stats(df):
    with np.errstate(all="ignore"):
        for x in STATISTICS:
            assert _same(chi2_sf(x, df), float(stats.chi2.sf(x, df))), (x, df)
            assert _same(t_sf(x, df), float(stats.t.sf(x, df))), (x, df)
            assert _same(t_cdf(x, df), float(stats.t.cdf(x, df))), (x, df)


def test_normal_equals_scipy_stats():
    for x in STATISTICS:
        assert _same(norm_sf(x), float(stats.norm.sf(x))), x
    assert norm_sf(1.959963984540054) == pytest.approx(0.025, abs=1e-15)
