"""Forecast comparison against Diebold & Mariano (1995), Harvey, Leybourne & Newbold (1997)
and Hansen, Lunde & Nason (2011).

The DM statistic is d_bar / sqrt([gamma_0 + 2 sum_{k<h} gamma_k] / T), gamma_k with divisor T
(Diebold & Mariano 1995); the HLN factor is sqrt((T + 1 - 2h + h(h-1)/T) / T), compared with
Student t on T - 1 df (Harvey, Leybourne & Newbold 1997); both formulas recalled. The worked
values below are computed with numpy 2.4.6 / scipy 1.17.1 from those formulas on invented
error series, the DM statistic also with statsmodels 0.15.0 (see the HAC test).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
import statsmodels.api as sm
from scipy import stats

from backtest.assessment.comparison import (
    compare_to_benchmark,
    diebold_mariano,
    model_confidence_set,
    pairwise,
)

# Invented worked example (T = 16) and edge case (T = 12)
E1 = [1.0, 1.4, -0.6, -1.8, 2.0, 2.2, 0.3, -0.5, 1.6, 1.9, -1.2, -0.4, 0.8, 1.5, -2.1, -1.7]
E2 = [0.8, 1.1, -0.7, -1.2, 1.1, 1.5, 0.4, -0.6, 0.9, 1.2, -1.0, -0.5, 0.7, 0.9, -1.3, -1.2]
EDGE1 = [1.2, -0.8, 2.1, 0.4, -1.5, 1.9, -0.3, 2.5, -1.1, 0.9, 1.7, -2.2]
EDGE2 = [0.9, -0.5, 1.4, 0.6, -1.0, 1.1, -0.7, 1.6, -0.9, 0.5, 1.2, -1.5]


def _slow_gamma(d, k):
    mean = sum(d) / len(d)
    return sum((d[t] - mean) * (d[t - k] - mean) for t in range(k, len(d))) / len(d)


@pytest.mark.parametrize(("h", "variance", "dm", "factor", "hln", "p"), [
    (1, 1.109737, 4.274090, 0.968246, 4.138370, 0.000875),
    (2, 1.746530, 3.406949, 0.905711, 3.085712, 0.007534),
    (3, 0.609646, 5.766532, 0.843171, 4.862173, 0.000207),
])
def test_dm_and_hln_match_the_reference_table(h, variance, dm, factor, hln, p):
    out = diebold_mariano(E1, E2, h, "squared")
    assert out["mean_difference"] == pytest.approx(1.125625, abs=1e-6)
    assert out["kernel"] == "rectangular"
    assert out["variance"] == pytest.approx(variance, abs=1e-6)
    assert out["dm"] == pytest.approx(dm, abs=1e-6)
    assert out["hln"] / out["dm"] == pytest.approx(factor, abs=1e-6)
    assert out["hln"] == pytest.approx(hln, abs=1e-6)
    assert out["p_value"] == pytest.approx(p, abs=1e-6)
    assert out["df"] == 15


def test_dm_normal_p_values_match_the_reference():
    assert diebold_mariano(E1, E2, 2)["p_value_normal"] == pytest.approx(0.000657, abs=1e-6)
    assert diebold_mariano(E1, E2, 1)["p_value_normal"] == pytest.approx(1.9e-5, abs=1e-6)


@pytest.mark.parametrize("h", [1, 2, 3])
def test_dm_matches_statsmodels_hac_with_a_uniform_kernel(h):
    # The DM variance is the HAC variance of the mean of d with a rectangular kernel and
    # h - 1 lags (Diebold & Mariano 1995): statsmodels 0.15.0 OLS of d on a constant,
    # cov_type='HAC', kernel='uniform', maxlags = h - 1, use_correction=False
    d = np.square(E1) - np.square(E2)
    ols = sm.OLS(d, np.ones_like(d)).fit(
        cov_type="HAC", cov_kwds={"kernel": "uniform", "maxlags": h - 1,
                                  "use_correction": False})
    assert diebold_mariano(E1, E2, h)["dm"] == pytest.approx(ols.tvalues[0], rel=1e-10)


def test_dm_edge_case_at_horizon_one_matches_the_reference():
    out = diebold_mariano(EDGE1, EDGE2, 1)
    assert out["dm"] == pytest.approx(3.615732, abs=1e-6)
    assert out["hln"] == pytest.approx(3.461800, abs=1e-6)


def test_negative_rectangular_variance_falls_back_to_bartlett_weights():
    # Computed with numpy 2.4.6: at h = 2 the rectangular variance is -0.110561 (DM
    # undefined, statsmodels 0.15.0 gives NaN); our rule: Bartlett weights 1 - k/h on the
    # same lags (Newey & West 1987).
    d = list(np.square(EDGE1) - np.square(EDGE2))
    gamma0, gamma1 = _slow_gamma(d, 0), _slow_gamma(d, 1)
    assert gamma0 + 2 * gamma1 == pytest.approx(-0.110561, abs=1e-6)
    out = diebold_mariano(EDGE1, EDGE2, 2)
    assert out["kernel"] == "bartlett"
    assert out["variance"] == pytest.approx(gamma0 + gamma1, rel=1e-12)
    dm = np.mean(d) / np.sqrt((gamma0 + gamma1) / 12)
    assert out["dm"] == pytest.approx(dm, rel=1e-12)
    assert out["hln"] == pytest.approx(dm * np.sqrt((12 + 1 - 4 + 2 / 12) / 12), rel=1e-12)


def test_absolute_loss_matches_a_slow_computation():
    d = [abs(a) - abs(b) for a, b in zip(E1, E2, strict=True)]
    out = diebold_mariano(E1, E2, 1, "absolute")
    assert out["dm"] == pytest.approx(np.mean(d) / np.sqrt(_slow_gamma(d, 0) / 16), rel=1e-12)


def test_one_sided_p_value_favours_the_first_model_when_its_losses_are_smaller():
    out = diebold_mariano(E2, E1, 1)
    assert out["mean_difference"] < 0
    assert out["p_value_first_better"] == pytest.approx(out["p_value"] / 2)


def test_identical_forecasts_have_no_statistic():
    out = diebold_mariano(E1, E1, 1)
    assert out["dm"] is None and "constant" in out["reason"]


def test_too_few_errors_for_the_horizon():
    assert "needs more" in diebold_mariano(E1[:3], E2[:3], 3)["reason"]


def test_unknown_loss_is_rejected():
    with pytest.raises(ValueError, match="loss"):
        diebold_mariano(E1, E2, 1, "pinball")


def _errors():
    rng = np.random.default_rng(7)
    base = rng.normal(size=(40, 3))
    errors = {"good": 0.5 * base, "bench": base + rng.normal(scale=0.3, size=(40, 3)),
              "bad": 2.0 * base}
    errors["good"][5, 0] = np.nan
    return errors


def test_compare_to_benchmark_tables_and_verdicts():
    out = compare_to_benchmark(_errors(), "bench")
    json.dumps(out, allow_nan=False)
    assert len(out["rows"]) == 2 * 3 * 2  # models x horizons x losses
    first = out["rows"][0]
    assert (first["model"], first["horizon"], first["loss"]) == ("good", 1, "squared")
    assert first["test"]["n"] == 39  # the NaN fold is left out of that pair only
    assert out["summary"]["good"]["squared"]["better_at"] == [1, 2, 3]
    assert out["summary"]["bad"]["squared"] == {"better_at": [], "worse_at": [1, 2, 3]}


def test_compare_to_benchmark_uses_origin_spacing_for_the_overlap():
    out = compare_to_benchmark(_errors(), "bench", losses=("squared",), origin_step=2)
    assert [row["test"]["horizon"] for row in out["rows"][:3]] == [1, 1, 2]


def test_compare_to_benchmark_needs_the_benchmark():
    with pytest.raises(ValueError, match="benchmark"):
        compare_to_benchmark(_errors(), "missing")


def test_pairwise_covers_every_pair():
    out = pairwise(_errors(), losses=("absolute",))
    pairs = {(row["first"], row["second"]) for row in out["rows"]}
    assert pairs == {("good", "bench"), ("good", "bad"), ("bench", "bad")}
    good_bench = [row for row in out["rows"] if row["first"] == "good"
                  and row["second"] == "bench"]
    assert {row["verdict"] for row in good_bench} == {"first_better"}


def _one_test(e1, e2, h, loss):
    """The DM/HLN statistics of one pair by the formulas in the module docstring, with
    numpy on that pair's vectors alone (gamma_k as a dot product, divisor T) and scipy
    1.17.1's distributions: the per-pair computation the batched tests must reproduce."""
    g = np.square if loss == "squared" else np.abs
    d = g(e1) - g(e2)
    n = len(d)
    centred = d - d.mean()
    gamma = np.array([centred[k:] @ centred[: n - k] / n for k in range(h)])
    variance = gamma[0] + 2.0 * gamma[1:].sum()
    if variance <= 1e-12 * float(np.mean(d**2)):
        variance = gamma[0] + 2.0 * ((1.0 - np.arange(1, h) / h) @ gamma[1:])
    dm = d.mean() / np.sqrt(variance / n)
    hln = dm * np.sqrt((n + 1 - 2 * h + h * (h - 1) / n) / n)
    return {"mean_difference": float(d.mean()), "variance": float(variance), "dm": float(dm),
            "hln": float(hln), "p_value_normal": 2.0 * stats.norm.sf(abs(dm)),
            "p_value": 2.0 * stats.t.sf(abs(hln), n - 1),
            "p_value_first_better": stats.t.cdf(hln, n - 1)}


def test_tests_computed_together_equal_each_pair_computed_alone():
    # Every pair's tests are computed in batches across pairs, horizons and losses; each
    # figure must be the one its own pair gives, to the last bit for the arithmetic (the
    # stored evidence and its audit digests depend on it), whatever the missing folds.
    rng = np.random.default_rng(18)
    errors = {f"m{j}": rng.normal(scale=1 + j, size=(30, 6)) for j in range(4)}
    errors["m1"][[3, 17], 2] = np.nan
    errors["m2"][9] = np.nan
    checked = 0
    for row in pairwise(errors)["rows"]:
        column = row["horizon"] - 1
        a, b = errors[row["first"]][:, column], errors[row["second"]][:, column]
        both = np.isfinite(a) & np.isfinite(b)
        expected = _one_test(a[both], b[both], row["horizon"], row["loss"])
        test = row["test"]
        assert test["n"] == both.sum()
        for key in ("mean_difference", "variance", "dm", "hln"):
            assert test[key] == expected[key], (row["first"], row["second"], key)
        for key in ("p_value_normal", "p_value", "p_value_first_better"):
            assert test[key] == pytest.approx(expected[key], rel=1e-12, abs=1e-300)
        checked += 1
    assert checked == 6 * 6 * 2  # pairs x horizons x losses
    kernels = {row["test"]["kernel"] for row in pairwise(errors)["rows"]}
    assert kernels == {"rectangular", "bartlett"}  # both variance rules were exercised


def test_tests_computed_together_match_statsmodels_hac():
    # statsmodels 0.15.0, as in the single-pair HAC test above, on rows of a batch.
    rng = np.random.default_rng(5)
    errors = {"a": rng.normal(size=(24, 3)), "b": 1.3 * rng.normal(size=(24, 3))}
    for row in pairwise(errors, losses=("squared",))["rows"]:
        if row["test"]["kernel"] != "rectangular":
            continue
        h = row["horizon"]
        d = np.square(errors["a"][:, h - 1]) - np.square(errors["b"][:, h - 1])
        ols = sm.OLS(d, np.ones_like(d)).fit(
            cov_type="HAC", cov_kwds={"kernel": "uniform", "maxlags": h - 1,
                                      "use_correction": False})
        assert row["test"]["dm"] == pytest.approx(ols.tvalues[0], rel=1e-10)


def _mcs_losses():
    # Invented deterministic losses, t = 0..59: A and B close, C and D clearly worse
    t = np.arange(60)
    base = 1 + 0.5 * np.sin(0.7 * t) ** 2
    return np.column_stack([base + 0.30 * np.cos(1.3 * t) ** 2,
                            base + 0.30 * np.cos(1.7 * t + 0.5) ** 2,
                            base + 0.60 + 0.30 * np.cos(2.1 * t) ** 2,
                            base + 1.00 + 0.30 * np.cos(0.9 * t + 1.0) ** 2])


@pytest.mark.parametrize("seed", [12345, 0, 1, 2])
def test_mcs_keeps_the_two_best_models(seed):
    # Hansen, Lunde & Nason (2011), range statistic T_R; computed with arch 8.0.0
    # (arch.bootstrap.MCS, size 0.10, block 5): the set is {A, B} for every seed 0-19
    out = model_confidence_set(_mcs_losses(), list("ABCD"), size=0.10, reps=1000,
                               block_size=5, seed=seed)
    assert set(out["included"]) == {"A", "B"} and set(out["excluded"]) == {"C", "D"}
    assert out["p_values"]["A"] == 1.0 and out["p_values"]["D"] == 0.0
    assert (out["seed"], out["block_size"], out["method"]) == (seed, 5, "R")
    json.dumps(out, allow_nan=False)


def test_mcs_records_a_drawn_seed_that_reproduces_the_run():
    first = model_confidence_set(_mcs_losses(), list("ABCD"), reps=200)
    again = model_confidence_set(_mcs_losses(), list("ABCD"), reps=200, seed=first["seed"])
    assert isinstance(first["seed"], int)
    assert again["p_values"] == first["p_values"]
    assert first["block_size"] == int(np.sqrt(60))


def test_mcs_accepts_a_generator_and_drops_rows_with_nan():
    losses = _mcs_losses()
    losses[3, 2] = np.nan
    out = model_confidence_set(losses, list("ABCD"), reps=200, block_size=5,
                               seed=np.random.default_rng(1))
    assert out["seed"] is None and (out["n"], out["rows_dropped"]) == (59, 1)
    assert set(out["included"]) == {"A", "B"}


def test_mcs_names_must_match_the_columns():
    with pytest.raises(ValueError, match="names"):
        model_confidence_set(_mcs_losses(), ["A", "B"])
