"""The residual chart draws the stored ACF/PACF against their bounds, and given residuals
their time plot and normal QQ plot."""

import numpy as np
import pytest
from scipy import stats

from backtest.candidates import parse_candidates
from backtest.demo import demo_series
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from service.views.charts import residual_chart
from service.views.charts.residuals import normal_quantiles


@pytest.fixture(scope="module")
def sr():
    plan = parse_plan({"horizon": 3, "max_origins": 3})
    return run_backtest([demo_series()[0]], parse_candidates([{"family": "theta"}]),
                        plan).series[0]


@pytest.fixture(scope="module")
def benchmark(sr):
    return sr.benchmark_id


def _bars(ax):
    """(lag, height) of every bar, in lag order."""
    bars = [p for c in ax.containers for p in c.patches]
    return sorted((p.get_x() + p.get_width() / 2, p.get_height()) for p in bars)


@pytest.mark.parametrize(("panel", "key", "outside_key"), [(0, "acf", "acf_outside"),
                                                          (1, "pacf", "pacf_outside")])
def test_bars_are_the_stored_correlations_and_beyond_bound_ones_stand_out(sr, benchmark, panel,
                                                                          key, outside_key):
    stored = sr.evidence["diagnostics"][benchmark]["residuals"]["acf"]
    ax = residual_chart(sr, benchmark).axes[panel]
    lags, heights = zip(*_bars(ax))
    assert np.allclose(lags, np.arange(1, stored["nlags"] + 1))
    assert np.allclose(heights, stored[key])
    hatched = [p for c in ax.containers for p in c.patches if p.get_hatch()]
    assert sorted(round(p.get_x() + p.get_width() / 2) for p in hatched) == stored[outside_key]
    assert stored["acf_outside"]  # the seasonal naive's residuals are autocorrelated here
    bounds = {line.get_gid(): line.get_ydata()[0] for line in ax.get_lines() if line.get_gid()}
    assert bounds[f"{key}-bound+"] == pytest.approx(stored["bound"])
    assert bounds[f"{key}-bound-"] == pytest.approx(-stored["bound"])
    assert stored["bound"] == pytest.approx(1.96 / np.sqrt(stored["n"]))


def test_without_residuals_only_the_correlation_panels_are_drawn(sr, benchmark):
    fig = residual_chart(sr, benchmark)
    assert [ax.get_title(loc="left") for ax in fig.axes] == ["ACF", "PACF"]
    assert fig.axes[0].get_xlabel() == "lag (months)"
    assert fig.axes[1].get_ylabel() == "PACF (no unit)"
    assert "Seasonal naive, season 12" in fig.get_suptitle()
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    assert legend == ["within the bounds", "beyond the bounds", "bounds +/- 1.96/sqrt(n)"]


def test_given_residuals_the_time_plot_and_qq_plot_show_them(sr, benchmark):
    values = np.random.default_rng(5).standard_t(4, 40)
    periods = [f"{2021 + i // 12}-{i % 12 + 1:02d}" for i in range(40)]
    fig = residual_chart(sr, benchmark, residuals=values, periods=periods,
                         residual_unit="kEUR")
    time_ax, qq_ax = fig.axes[2], fig.axes[3]
    line = next(x for x in time_ax.get_lines() if x.get_gid() == "residuals")
    assert np.allclose(line.get_ydata(), values)
    assert time_ax.get_ylabel() == "residual (kEUR)"
    assert {t.get_text() for t in time_ax.get_xticklabels()} <= set(periods)
    points = next(x for x in qq_ax.get_lines() if x.get_gid() == "qq-points")
    standardised = (values - values.mean()) / values.std(ddof=1)
    assert np.allclose(points.get_ydata(), np.sort(standardised))
    assert np.allclose(points.get_xdata(), normal_quantiles(40))
    reference = next(x for x in qq_ax.get_lines() if x.get_gid() == "qq-line")
    assert np.allclose(reference.get_xdata(), reference.get_ydata())


def test_normal_quantiles_are_centred_and_ordered():
    q = normal_quantiles(9)
    assert q[4] == pytest.approx(0.0) and np.all(np.diff(q) > 0)
    assert q[0] == pytest.approx(stats.norm.ppf((1 - 0.375) / 9.25))


def test_residuals_need_one_period_each_and_stored_correlations(sr, benchmark):
    with pytest.raises(ValueError, match="period label"):
        residual_chart(sr, benchmark, residuals=[1.0, 2.0], periods=["2024-01"])
    with pytest.raises(ValueError, match="no residual autocorrelations"):
        residual_chart(sr, "c-unknown")
