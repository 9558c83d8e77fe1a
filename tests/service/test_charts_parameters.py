"""Parameter paths: estimates at the re-estimating origins with +/- 1.96 s.e. bands."""

import dataclasses

import numpy as np
import pytest
from matplotlib.collections import PolyCollection

from backtest.candidates import parse_candidates
from backtest.demo import DEMO_CANDIDATES, demo_series
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from service.views.charts import parameter_path_chart
from service.views.charts.parameters import default_names, parameter_paths

AIRLINE = DEMO_CANDIDATES[3]


@pytest.fixture(scope="module")
def sr():
    plan = parse_plan({"horizon": 3, "max_origins": 5, "refit": 2})
    candidates = parse_candidates([AIRLINE, {"family": "theta"}])
    return run_backtest([demo_series()[0]], candidates, plan).series[0]


def _id(sr, family):
    return next(c.candidate_id for c in sr.candidates if c.spec["family"] == family)


def _refits(sr, candidate_id):
    return sorted((f for f in sr.folds if f.candidate_id == candidate_id and f.reestimated),
                  key=lambda f: f.fold)


def _panels(fig):
    return {ax.get_title(loc="left"): ax for ax in fig.axes if ax.get_visible()}


def test_one_panel_per_coefficient_with_its_path(sr):
    arima = _id(sr, "arima")
    refits = _refits(sr, arima)
    assert [f.fold for f in refits] == [0, 2, 4]  # refit every second origin
    panels = _panels(parameter_path_chart(sr, arima))
    assert set(panels) == {"MA 1 (ma.L1)", "seasonal MA 1 (ma.S.L12)",
                           "innovation variance (sigma2)"}
    for title, ax in panels.items():
        name = title.split("(")[-1].rstrip(")")  # the library's name, after the readable one
        line = ax.get_lines()[0]
        assert list(line.get_xdata()) == [0, 2, 4]
        assert np.allclose(line.get_ydata(),
                           [f.fit_summary["params"][name]["estimate"] for f in refits])


def test_bands_span_196_standard_errors(sr):
    arima = _id(sr, "arima")
    ax = _panels(parameter_path_chart(sr, arima))["MA 1 (ma.L1)"]
    vertices = next(c for c in ax.collections if isinstance(c, PolyCollection)
                    ).get_paths()[0].vertices
    for f in _refits(sr, arima):
        row = f.fit_summary["params"]["ma.L1"]
        at_x = vertices[np.isclose(vertices[:, 0], f.fold), 1]
        assert np.isclose(at_x.min(), row["estimate"] - 1.96 * row["std_error"])
        assert np.isclose(at_x.max(), row["estimate"] + 1.96 * row["std_error"])


def test_a_family_without_standard_errors_gets_paths_without_bands(sr):
    theta = _id(sr, "theta")
    panels = _panels(parameter_path_chart(sr, theta))
    assert set(panels) == {"trend slope (b0)", "smoothing weight (alpha)",
                           "innovation variance (sigma2)"}
    assert not any(isinstance(c, PolyCollection) for ax in panels.values()
                   for c in ax.collections)
    alpha = [f.params["alpha"] for f in _refits(sr, theta)]
    assert np.allclose(panels["smoothing weight (alpha)"].get_lines()[0].get_ydata(), alpha)


def test_coefficients_flagged_by_the_stability_rule_say_so(sr):
    arima = _id(sr, "arima")
    stability = {**sr.evidence["stability"][arima], "unstable": ["ma.S.L12"]}
    flagged = dataclasses.replace(sr, evidence={**sr.evidence,
                                                "stability": {arima: stability}})
    titles = set(_panels(parameter_path_chart(flagged, arima)))
    assert titles == {"MA 1 (ma.L1)", "seasonal MA 1 (ma.S.L12) (flagged unstable)",
                      "innovation variance (sigma2)"}


def test_initial_states_are_left_out_by_default(sr):
    arima = _id(sr, "arima")
    coefficients = [{"name": n} for n in ("smoothing_level", "initial_level",
                                          "initial_seasonal.0", "damping_trend")]
    ets_like = dataclasses.replace(sr, evidence={**sr.evidence, "stability": {
        arima: {"coefficients": coefficients}}})
    assert default_names(ets_like, arima) == ["smoothing_level", "damping_trend"]


def test_axes_labels_and_title(sr):
    fig = parameter_path_chart(sr, _id(sr, "arima"))
    assert fig.get_supylabel() == "estimate (model scale)"
    assert all(ax.get_xlabel() == "origin (last training period)" for ax in fig.axes
               if ax.get_visible())
    assert "parameter paths of ARIMA(0,1,1)×(0,1,1), season 12, log" in fig.get_suptitle().replace(
        "\n", " ")
    assert [t.get_text() for t in fig.legends[0].get_texts()] == [
        "estimate +/- 1.96 s.e.", "estimate"]


def test_fewer_than_two_refits_is_refused(sr):
    arima = _id(sr, "arima")
    assert len(parameter_paths(_refits(sr, arima)[:1], ["ma.L1"])[0].positions) == 1
    folds = tuple(f for f in sr.folds if f.candidate_id != arima or f.fold < 2)
    with pytest.raises(ValueError, match="fewer than two"):
        parameter_path_chart(dataclasses.replace(sr, folds=folds), arima)
