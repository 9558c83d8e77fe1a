"""The fan chart draws the history, the forecast, its bands and the actuals it is given."""

import dataclasses

import numpy as np
import pytest
from matplotlib.collections import PolyCollection
from matplotlib.colors import to_hex

from backtest.candidates import parse_candidates
from backtest.demo import demo_series
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from service.views.charts import ForecastBands, fan_chart


@pytest.fixture(scope="module")
def backtest():
    series = demo_series()[1]
    plan = parse_plan({"horizon": 4, "max_origins": 3, "levels": [80, 95], "seed": 1})
    result = run_backtest([series], parse_candidates([{"family": "theta"}]), plan)
    return series, result.series[0]


@pytest.fixture(scope="module")
def drawn(backtest):
    series, sr = backtest
    fold = max((f for f in sr.folds if f.candidate_id != sr.benchmark_id), key=lambda f: f.fold)
    fig = fan_chart(ForecastBands.from_fold(fold), series.labels(), series.values,
                    series_key=sr.series["key"], candidate_label="Theta", unit="kEUR",
                    frequency="P1M")
    return series, fold, fig


def _line(fig, label):
    return next(line for line in fig.axes[0].get_lines() if line.get_label() == label)


def _bands(fig):
    return {c.get_label(): c for c in fig.axes[0].collections if isinstance(c, PolyCollection)}


def test_forecast_bands_come_from_the_fold(backtest):
    _, sr = backtest
    fold = sr.folds[0]
    bands = ForecastBands.from_fold(fold)
    assert (bands.origin, bands.periods, bands.point) == (fold.origin, fold.periods, fold.point)
    assert bands.lower == fold.lower and bands.actuals == fold.actuals
    failed = dataclasses.replace(fold, status="failed", point=None, reason="boom")
    with pytest.raises(ValueError, match="failed"):
        ForecastBands.from_fold(failed)


def test_history_stops_at_the_origin(drawn):
    series, fold, fig = drawn
    cut = series.index_of(fold.origin) + 1
    history = _line(fig, "history")
    assert np.array_equal(history.get_xdata(), np.arange(cut))
    assert np.allclose(history.get_ydata(), series.values[:cut])


def test_point_forecast_and_actuals_follow_the_origin(drawn):
    series, fold, fig = drawn
    ahead = np.arange(len(fold.periods)) + series.index_of(fold.origin) + 1
    point, actual = _line(fig, "point forecast"), _line(fig, "actual")
    assert np.array_equal(point.get_xdata(), ahead)
    assert np.allclose(point.get_ydata(), fold.point)
    assert np.allclose(actual.get_ydata(), fold.actuals)
    assert np.allclose(actual.get_ydata(), series.values[ahead])


@pytest.mark.parametrize("level", [80, 95])
def test_each_band_spans_its_bounds(drawn, level):
    series, fold, fig = drawn
    ahead = np.arange(len(fold.periods)) + series.index_of(fold.origin) + 1
    vertices = _bands(fig)[f"{level} % interval"].get_paths()[0].vertices
    for x, low, high in zip(ahead, fold.lower[level], fold.upper[level]):
        at_x = vertices[np.isclose(vertices[:, 0], x), 1]
        assert np.isclose(at_x.min(), low) and np.isclose(at_x.max(), high)


def test_bands_are_outlined_neutral_and_named_at_the_right_edge(drawn):
    series, fold, fig = drawn
    ax = fig.axes[0]
    bands = _bands(fig)
    for level in (80, 95):
        faces = bands[f"{level} % interval"].get_facecolor()
        assert len(faces) == 0 or faces[0][3] == 0  # outline only
        names = [t for t in ax.texts if t.get_gid() in (f"level-label-{level}-upper",
                                                        f"level-label-{level}-lower")]
        assert [t.get_text() for t in names] == [f"{level} %"] * 2
        last = _line(fig, "point forecast").get_xdata()[-1]
        assert {t.xy for t in names} == {(last, fold.upper[level][-1]),
                                         (last, fold.lower[level][-1])}
        assert max(t.xy[0] for t in names) < ax.get_xlim()[1] - 1  # room for the text
    assert bands["80 % interval"].get_linestyle() != bands["95 % interval"].get_linestyle()
    fill = bands["_fan"].get_facecolor()[0]
    assert abs(fill[0] - fill[1]) < 0.05 and abs(fill[1] - fill[2]) < 0.05  # neutral


def test_the_point_forecast_has_its_own_colour(drawn):
    fig = drawn[2]
    point = to_hex(_line(fig, "point forecast").get_color())
    others = {to_hex(_line(fig, name).get_color()) for name in ("history", "actual")}
    edges = {to_hex(c.get_edgecolor()[0]) for label, c in _bands(fig).items()
             if not label.startswith("_")}
    assert point not in others | edges


def test_labels_title_and_legend(drawn):
    series, fold, fig = drawn
    ax = fig.axes[0]
    assert ax.get_ylabel() == "value (kEUR)" and ax.get_xlabel() == "period (month)"
    assert "sales/bakery" in fig.get_suptitle() and fold.origin in fig.get_suptitle()
    legend = [t.get_text() for t in fig.legends[0].get_texts()]
    assert legend == ["80 % interval", "95 % interval", "history", "point forecast", "actual"]
    ticks = {t.get_text() for t in ax.get_xticklabels()}
    assert ticks and ticks <= set(series.labels())


def test_an_issued_forecast_has_no_actuals_and_needs_history_to_its_origin():
    forecast = ForecastBands("2024-12", ("2025-01", "2025-02"), (5.0, 6.0), {80: (4.0, 4.5)},
                             {80: (6.0, 7.5)}, (None, None))
    fig = fan_chart(forecast, ["2024-11", "2024-12"], [4.0, 5.0], series_key="k",
                    candidate_label="c")
    assert "actual" not in [line.get_label() for line in fig.axes[0].get_lines()]
    assert fig.axes[0].get_ylabel() == "value (series units)"
    with pytest.raises(ValueError, match="origin"):
        fan_chart(forecast, ["2024-10", "2024-11"], [4.0, 5.0], series_key="k",
                  candidate_label="c")
