"""The overview draws every candidate's score by horizon, the benchmark marked."""

import dataclasses

import numpy as np
import pytest

from backtest.candidates import parse_candidates
from backtest.demo import demo_series
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from service.views.charts import score_by_horizon_chart
from service.views.charts.style import BENCHMARK_LOOK, BLUE, CANDIDATE_LOOKS


@pytest.fixture(scope="module")
def sr():
    candidates = parse_candidates([{"family": "benchmark", "method": "naive"},
                                   {"family": "benchmark", "method": "drift"},
                                   {"family": "theta"}])
    plan = parse_plan({"horizon": 5, "max_origins": 4, "levels": [80, 95]})
    return run_backtest([demo_series()[0]], candidates, plan).series[0]


def _scores(sr, candidate_id, metric, level=None):
    by_h = {s.horizon: s.value for s in sr.scores if s.candidate_id == candidate_id
            and s.metric == metric and s.level == level and s.horizon is not None}
    return [by_h[h] for h in sorted(by_h)]


def _lines(fig):
    return {line.get_label(): line for line in fig.axes[0].get_lines()
            if not line.get_label().startswith("_")}


def test_one_line_per_candidate_with_its_mase_by_horizon(sr):
    lines = _lines(score_by_horizon_chart(sr))
    assert len(lines) == len(sr.candidates) == 4  # the plan added the seasonal naive
    for row in sr.ranking:
        label = row.label + (" (benchmark)" if row.is_benchmark else "")
        assert np.array_equal(lines[label].get_xdata(), np.arange(1, 6))
        assert np.allclose(lines[label].get_ydata(), _scores(sr, row.candidate_id, "mase"))


def test_the_benchmark_is_marked_in_legend_and_look(sr):
    fig = score_by_horizon_chart(sr)
    benchmark = next(r for r in sr.ranking if r.is_benchmark)
    line = _lines(fig)[f"{benchmark.label} (benchmark)"]
    assert line.get_color() == BENCHMARK_LOOK.color
    assert line.get_linewidth() > max(x.get_linewidth() for x in fig.axes[0].get_lines()
                                      if x is not line)
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    assert legend == [r.label + (" (benchmark)" if r.is_benchmark else "") for r in sr.ranking]


def test_another_score_is_selectable_with_its_unit(sr):
    fig = score_by_horizon_chart(sr, metric="rmse", unit="kEUR")
    theta = next(c for c in sr.candidates if c.spec["family"] == "theta")
    assert np.allclose(_lines(fig)[theta.label].get_ydata(),
                       _scores(sr, theta.candidate_id, "rmse"))
    assert fig.axes[0].get_ylabel() == "RMSE (kEUR)"
    assert fig.axes[0].get_xlabel() == "horizon (months ahead)"
    assert "RMSE by horizon" in fig.get_suptitle()


def test_coverage_is_drawn_in_percent_for_the_chosen_level(sr):
    fig = score_by_horizon_chart(sr, metric="coverage", level=95)
    theta = next(c for c in sr.candidates if c.spec["family"] == "theta")
    expected = 100 * np.array(_scores(sr, theta.candidate_id, "coverage", 95))
    assert np.allclose(_lines(fig)[theta.label].get_ydata(), expected)
    assert fig.axes[0].get_ylabel() == "coverage, 95 % interval (%)"


def test_a_level_score_without_level_or_an_unknown_score_is_refused(sr):
    with pytest.raises(ValueError, match="no msis scores"):
        score_by_horizon_chart(sr, metric="msis")
    with pytest.raises(ValueError, match="unknown score"):
        score_by_horizon_chart(sr, metric="accuracy")


def test_the_best_ranked_candidate_gets_the_strongest_colour(sr):
    fig = score_by_horizon_chart(sr)
    best = next(r for r in sorted(sr.ranking, key=lambda r: r.rank) if not r.is_benchmark)
    assert _lines(fig)[best.label].get_color() == CANDIDATE_LOOKS[0].color == BLUE


def test_a_far_worse_candidate_is_clipped_and_marked_off_scale(sr):
    worst = max((r for r in sr.ranking if not r.is_benchmark), key=lambda r: r.rank)
    inflated = dataclasses.replace(sr, scores=tuple(
        dataclasses.replace(s, value=s.value * 20) if s.candidate_id == worst.candidate_id
        and s.metric == "mase" and s.value is not None else s for s in sr.scores))
    fig = score_by_horizon_chart(inflated)
    ax = fig.axes[0]
    others = [v for r in sr.ranking if r.candidate_id != worst.candidate_id
              for v in _scores(sr, r.candidate_id, "mase")]
    assert max(others) < ax.get_ylim()[1] < max(_scores(inflated, worst.candidate_id, "mase"))
    marks = next(line for line in ax.get_lines()
                 if line.get_gid() == f"off-scale-{worst.candidate_id}")
    assert np.allclose(marks.get_ydata(), ax.get_ylim()[1])
    note = next(t for t in ax.texts if t.get_gid() == "off-scale-note").get_text()
    assert worst.label in note
    unclipped = score_by_horizon_chart(sr).axes[0]
    assert not any(t.get_gid() == "off-scale-note" for t in unclipped.texts)
