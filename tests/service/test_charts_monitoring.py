"""The monitoring chart draws realised accuracy against the backtest, coverage to date against
the nominal levels, and marks each raised flag at the period it points at."""

import dataclasses
import re

import numpy as np
import pytest

from backtest.ledger import Flag, MonitoringReport, RealisedPoint, expectation_from_folds, monitor
from service.views.charts import render
from service.views.charts.monitoring import (
    COVERAGE_AXIS,
    EMPTY_MESSAGE,
    MASE_AXIS,
    NO_BACKTEST,
    flag_label,
    monitoring_chart,
    running_coverage,
)
from tests.backtest.ledger.simulated import Ar1, ledger, monthly_series


@pytest.fixture(scope="module")
def gone_wrong():
    """A known AR(1) whose series moves up 3 sigma when issuing starts: every flag rises."""
    model = Ar1(horizon=2)
    y = model.path(np.random.default_rng(11), 80, shift_at=40, shift=3 * model.sigma)
    folds = [model.fold(y, 10 + k, k) for k in range(28)]
    return monitor(ledger(model, monthly_series(y), 40, 39),
                   expectation_from_folds(folds, "car1"))


def point(period, count, mase, coverage, expected=None):
    return RealisedPoint(period=period, count=count, mase=mase, smape=None, coverage=coverage,
                         interval_score={}, horizons=tuple(range(1, count + 1)),
                         expected_mase=expected)


def raised(rule, first_period, level=None):
    return Flag(rule=rule, state="raised", level=level, statistic=1.0, p_value=0.01,
                threshold=0.05, first_period=first_period, detail="by hand", outcomes=12,
                needed=6)


def by_hand(flags=(), expected=0.8):
    realised = (point("2024-01", 1, 0.5, {80: 1.0}, expected),
                point("2024-03", 2, 1.5, {80: 0.5}, expected),
                point("2024-04", 1, 2.0, {80: 0.0}, expected))
    return MonitoringReport("sales/north", "c1", realised, None, tuple(flags))


def lines(ax):
    return {line.get_label(): line for line in ax.get_lines()}


def flag_marks(ax):
    return [line.get_xdata()[0] for line in ax.get_lines()
            if re.fullmatch(r"flag-\d+(-coverage)?", line.get_gid() or "")]


def flag_names(ax):
    return [t.get_text() for t in ax.texts if (t.get_gid() or "").startswith("flag-label-")]


def test_realised_mase_beside_the_backtest_mase_of_the_same_horizons(gone_wrong):
    accuracy = monitoring_chart(gone_wrong).axes[0]
    drawn = lines(accuracy)
    realised = drawn["realised MASE"]
    assert np.array_equal(realised.get_xdata(), np.arange(len(gone_wrong.realised)))
    assert np.allclose(realised.get_ydata(), [p.mase for p in gone_wrong.realised])
    expected = drawn["backtest MASE, same horizons"]
    assert np.allclose(expected.get_ydata(), [p.expected_mase for p in gone_wrong.realised])
    assert accuracy.get_ylim()[0] == 0
    assert accuracy.get_title("left").startswith("realised accuracy by target period")
    assert NO_BACKTEST not in accuracy.get_title("left")


def test_running_coverage_weights_each_period_by_its_outcomes():
    realised = (point("2024-01", 1, 1.0, {95: 1.0}), point("2024-02", 1, 1.0, {80: 1.0}),
                point("2024-03", 2, 1.0, {80: 0.5}), point("2024-04", 1, 1.0, {80: 0.0}))
    # 80 %: nothing yet, then 1/1, (1 + 1)/3, 2/4
    assert np.allclose(running_coverage(realised, 80), [np.nan, 1.0, 2 / 3, 0.5],
                       equal_nan=True)
    assert np.allclose(running_coverage(realised, 95), [1.0] * 4)


@pytest.mark.parametrize("level", [80, 95])
def test_coverage_panel_draws_coverage_to_date_and_the_nominal_level(gone_wrong, level):
    coverage = monitoring_chart(gone_wrong).axes[1]
    drawn = lines(coverage)
    assert np.allclose(drawn[f"{level} %: realised to date"].get_ydata(),
                       100 * running_coverage(gone_wrong.realised, level))
    assert np.allclose(drawn[f"{level} %: nominal"].get_ydata(), level)


def test_coverage_to_date_by_hand():
    drawn = lines(monitoring_chart(by_hand()).axes[1])
    # hits 1 of 1, then 1 of 2 more, then 0 of 1 more
    assert np.allclose(drawn["80 %: realised to date"].get_ydata(), [100, 200 / 3, 50])
    assert "95 %: nominal" not in drawn


def test_each_raised_flag_is_marked_on_both_panels_at_its_first_period(gone_wrong):
    assert all(f.raised for f in gone_wrong.flags)
    periods = [p.period for p in gone_wrong.realised]
    at = sorted({periods.index(f.first_period) for f in gone_wrong.flags})
    accuracy, coverage = monitoring_chart(gone_wrong).axes
    assert sorted(flag_marks(accuracy)) == at and sorted(flag_marks(coverage)) == at
    names = ", ".join(flag_names(accuracy))
    for flag in gone_wrong.flags:
        assert flag_label(flag) in names


def test_quiet_flags_are_not_marked(gone_wrong):
    quiet = tuple(dataclasses.replace(f, state="raised" if f.rule != "level_shift" else "clear")
                  for f in gone_wrong.flags)
    accuracy = monitoring_chart(dataclasses.replace(gone_wrong, flags=quiet)).axes[0]
    names = ", ".join(flag_names(accuracy))
    assert "level shift" not in names and "accuracy" in names
    shift = next(f for f in gone_wrong.flags if f.rule == "level_shift")
    assert [p.period for p in gone_wrong.realised].index(shift.first_period) not in (
        flag_marks(accuracy))


def test_flags_at_one_period_share_a_mark_and_a_period_not_drawn_goes_to_the_next():
    report = by_hand([raised("coverage", "2024-01", 80), raised("accuracy", "2024-01"),
                      raised("level_shift", "2024-02")])
    accuracy = monitoring_chart(report).axes[0]
    assert flag_marks(accuracy) == [0, 1]  # 2024-02 has no outcome: marked at 2024-03
    assert flag_names(accuracy) == ["coverage 80 %, accuracy", "level shift"]
    legend = [t.get_text() for t in monitoring_chart(report).legends[0].get_texts()]
    assert legend.count("raised flag") == 1


def test_names_of_late_flags_run_leftwards_inside_the_panel():
    accuracy = monitoring_chart(by_hand([raised("level_shift", "2024-04")])).axes[0]
    name = next(t for t in accuracy.texts if t.get_gid() == "flag-label-0")
    assert name.get_horizontalalignment() == "right"
    early = monitoring_chart(by_hand([raised("accuracy", "2024-01")])).axes[0]
    assert next(t for t in early.texts
                if t.get_gid() == "flag-label-0").get_horizontalalignment() == "left"


def test_without_a_backtest_the_chart_says_there_is_nothing_to_compare_with():
    fig = monitoring_chart(by_hand(expected=None))
    accuracy = fig.axes[0]
    assert "backtest MASE, same horizons" not in lines(accuracy)
    assert accuracy.get_title("left").endswith(f"({NO_BACKTEST})")
    assert np.allclose(lines(accuracy)["realised MASE"].get_ydata(), [0.5, 1.5, 2.0])


def test_without_outcomes_the_chart_says_so():
    fig = monitoring_chart(dataclasses.replace(by_hand(), realised=()), candidate_label="Drift")
    (ax,) = fig.axes
    assert [t.get_text() for t in ax.texts] == [EMPTY_MESSAGE]
    assert not ax.get_lines() and not ax.axison
    assert fig.get_suptitle() == "sales/north: monitoring of Drift"


def test_labels_title_and_legend(gone_wrong):
    fig = monitoring_chart(gone_wrong, candidate_label="AR(1) known", frequency="P1M")
    accuracy, coverage = fig.axes
    assert accuracy.get_ylabel() == MASE_AXIS and coverage.get_ylabel() == COVERAGE_AXIS
    assert coverage.get_xlabel() == "target period (month)"
    assert fig.get_suptitle() == "sim: monitoring of AR(1) known"
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    assert legend == ["realised MASE", "backtest MASE, same horizons", "raised flag",
                      "80 %: nominal", "80 %: realised to date", "95 %: nominal",
                      "95 %: realised to date"]
    ticks = {t.get_text() for t in coverage.get_xticklabels()}
    assert ticks and ticks <= {p.period for p in gone_wrong.realised}
    assert monitoring_chart(gone_wrong).get_suptitle() == "sim: monitoring of car1"


def test_svg_ids_stay_unique_with_several_flags(gone_wrong):
    svg = render(monitoring_chart(gone_wrong), "svg").decode()
    ids = re.findall(r'\bid="([^"]+)"', svg)
    assert "flag-label-1" in ids and len(ids) == len(set(ids))
