"""The calibration chart draws observed coverage, nominal levels, binomial ranges and misses."""

import dataclasses

import numpy as np
import pytest
from matplotlib.collections import PolyCollection
from scipy import stats

from backtest.candidates import parse_candidates
from backtest.demo import demo_series
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from service.views.charts import calibration_chart
from service.views.charts.calibration import DODGE, binomial_range, one_step_misses


@pytest.fixture(scope="module")
def sr():
    plan = parse_plan({"horizon": 3, "max_origins": 12, "levels": [80, 95]})
    candidates = parse_candidates([{"family": "benchmark", "method": "naive"}])
    return run_backtest([demo_series()[2]], candidates, plan).series[0]


@pytest.fixture(scope="module")
def naive(sr):
    return next(c.candidate_id for c in sr.candidates if c.spec["method"] == "naive")


def _report(sr, candidate_id, level):
    return next(r for r in sr.evidence["calibration"][candidate_id] if r["level"] == level)


@pytest.mark.parametrize(("nominal", "trials"), [(0.8, 12), (0.95, 30), (0.5, 7)])
def test_binomial_range_holds_95_percent_of_outcomes(nominal, trials):
    low, high = binomial_range(nominal, [trials])
    k_low, k_high = round(low[0] * trials), round(high[0] * trials)
    assert stats.binom.cdf(k_low - 1, trials, nominal) < 0.025 <= stats.binom.cdf(
        k_low, trials, nominal)
    assert stats.binom.cdf(k_high - 1, trials, nominal) < 0.975 <= stats.binom.cdf(
        k_high, trials, nominal)
    assert np.isnan(binomial_range(nominal, [0])[0][0])


@pytest.mark.parametrize("level", [80, 95])
def test_coverage_panel_draws_evidence_nominal_and_range(sr, naive, level):
    fig = calibration_chart(sr, naive)
    ax = fig.axes[0]
    report = _report(sr, naive, level)
    rows = report["by_horizon"]
    lines = {line.get_label(): line for line in ax.get_lines()}
    observed = lines[f"{level} %: observed"]
    assert np.allclose(observed.get_ydata(), [100 * r["coverage"] for r in rows])
    assert np.allclose(lines[f"{level} %: nominal"].get_ydata(), level)
    # the levels sit side by side around each horizon, so equal coverage stays visible
    offset = observed.get_xdata() - np.array([r["horizon"] for r in rows])
    assert np.allclose(offset, -DODGE / 2 if level == 80 else DODGE / 2)
    band = next(c for c in ax.collections if isinstance(c, PolyCollection)
                and c.get_label() == f"{level} %: range if calibrated")
    vertices = band.get_paths()[0].vertices
    low, high = binomial_range(report["nominal_coverage"], [r["trials"] for r in rows])
    for h, lo, hi in zip([r["horizon"] for r in rows], low, high):
        at_h = vertices[np.isclose(vertices[:, 0], h), 1]
        assert np.isclose(at_h.min(), 100 * lo) and np.isclose(at_h.max(), 100 * hi)


@pytest.mark.parametrize("level", [80, 95])
def test_miss_panel_marks_the_origins_whose_one_step_actual_fell_outside(sr, naive, level):
    folds = sorted((f for f in sr.folds if f.candidate_id == naive), key=lambda f: f.fold)
    outside = [i for i, f in enumerate(folds)
               if not f.lower[level][0] <= f.actuals[0] <= f.upper[level][0]]
    assert [i for i, m in enumerate(one_step_misses(folds, level)) if m] == outside
    assert len(outside) == _report(sr, naive, level)["by_horizon"][0]["misses"]
    lines = {line.get_gid(): line for line in calibration_chart(sr, naive).axes[1].get_lines()}
    assert list(lines[f"misses-{level}"].get_xdata()) == outside
    assert len(lines[f"hits-{level}"].get_xdata()) == len(folds) - len(outside)


def test_failed_folds_are_neither_hits_nor_misses(sr, naive):
    failed_fold = sorted(f.fold for f in sr.folds if f.candidate_id == naive)[3]
    folds = tuple(dataclasses.replace(f, status="failed", point=None, reason="boom")
                  if f.candidate_id == naive and f.fold == failed_fold else f
                  for f in sr.folds)
    fig = calibration_chart(dataclasses.replace(sr, folds=folds), naive)
    lines = {line.get_gid(): line for line in fig.axes[1].get_lines()}
    assert list(lines["failed"].get_xdata()) == [3]
    drawn = [*lines["hits-80"].get_xdata(), *lines["misses-80"].get_xdata()]
    assert 3 not in drawn and len(drawn) == sum(
        f.candidate_id == naive for f in folds) - 1


def test_labels_and_title(sr, naive):
    fig = calibration_chart(sr, naive)
    coverage, misses = fig.axes
    assert coverage.get_ylabel() == "coverage (% of actuals inside)"
    assert coverage.get_xlabel() == "horizon (months ahead)"
    assert [t.get_text() for t in misses.get_yticklabels()] == ["80 %", "95 %"]
    assert "interval calibration of Naive" in fig.get_suptitle()
    assert "80 %: observed" in [t.get_text() for t in fig.legends[0].get_texts()]


def test_a_candidate_without_calibration_evidence_is_refused(sr):
    with pytest.raises(ValueError, match="no calibration evidence"):
        calibration_chart(sr, "c-unknown")
