"""Parameter stability across re-estimating folds."""

from __future__ import annotations

import json

import pytest

from backtest.assessment.fit_report import fold_fit_summary
from backtest.assessment.stability import summarise_folds
from backtest.models.arima import ArimaSpec


def _report(params, lb_p=0.5, converged=True):
    """A compact report as fold_fit_summary returns it: name -> (estimate, se, p)."""
    return {"converged": converged,
            "params": {n: {"estimate": e, "std_error": s, "p_value": p}
                       for n, (e, s, p) in params.items()},
            "ljung_box": {"lag": 12, "p_value": lb_p, "reason": None}, "warnings": []}


def _by_name(summary):
    return {row["name"]: row for row in summary["coefficients"]}


def test_stable_coefficient_is_not_flagged_and_significance_share_is_counted():
    estimates = [0.50, 0.52, 0.49, 0.51]
    p_values = [0.001, 0.002, 0.2, 0.01]
    reports = [_report({"ar.L1": (e, 0.05, p)}) for e, p in zip(estimates, p_values, strict=True)]
    row = _by_name(summarise_folds(reports, [{"ar.L1": e} for e in estimates]))["ar.L1"]
    assert row["path"] == estimates
    assert row["share_significant"] == pytest.approx(0.75)
    assert row["range"] == pytest.approx(0.03)
    assert row["range_in_std_errors"] == pytest.approx(0.6)
    assert row["unstable"] is False


def test_range_beyond_three_median_standard_errors_is_unstable():
    estimates = [-0.2, 0.1, -0.3, 0.4]
    reports = [_report({"ma.L1": (e, 0.05, 0.5)}) for e in estimates]
    summary = summarise_folds(reports, [{"ma.L1": e} for e in estimates])
    assert _by_name(summary)["ma.L1"]["unstable"] is True
    assert summary["unstable"] == ["ma.L1"]


def test_significant_sign_change_is_unstable_even_within_the_range_rule():
    reports = [_report({"drift": (0.3, 0.1, 0.01)}), _report({"drift": (-0.3, 0.1, 0.01)})]
    row = _by_name(summarise_folds(reports, [{"drift": 0.3}, {"drift": -0.3}],
                                   range_factor=10))["drift"]
    assert row["significant_sign_change"] is True and row["unstable"] is True


def test_ljung_box_and_convergence_shares_skip_failed_folds():
    reports = [_report({"a": (1, 1, 0.5)}, lb_p=0.01), _report({"a": (1, 1, 0.5)}, lb_p=0.2),
               None, _report({"a": (1, 1, 0.5)}, lb_p=0.03, converged=False)]
    params = [{"a": 1.0}, {"a": 1.0}, None, {"a": 1.0}]
    summary = summarise_folds(reports, params)
    assert summary["ljung_box"] == {"lag": 12, "n_tested": 3,
                                    "share_rejected": pytest.approx(2 / 3)}
    assert summary["share_converged"] == pytest.approx(2 / 3)
    assert _by_name(summary)["a"]["path"] == [1.0, 1.0, None, 1.0]


def test_without_standard_errors_the_flag_is_undetermined():
    reports = [_report({"alpha": (0.2, None, None)}), _report({"alpha": (0.9, None, None)})]
    row = _by_name(summarise_folds(reports, [{"alpha": 0.2}, {"alpha": 0.9}]))["alpha"]
    assert row["unstable"] is None and "no standard errors" in row["reason"]
    assert row["share_significant"] is None


def test_single_fold_is_undetermined():
    row = _by_name(summarise_folds([_report({"a": (1, 1, 0.5)})], [{"a": 1.0}]))["a"]
    assert row["unstable"] is None and "fewer than two" in row["reason"]


def test_lengths_must_match():
    with pytest.raises(ValueError, match="same length"):
        summarise_folds([None], [])


def test_summary_of_real_fold_fits_on_expanding_windows(log_air):
    spec = ArimaSpec(order=(0, 1, 1), deterministic="drift")
    windows = [log_air[:n] for n in (108, 120, 132)]
    fits = [spec.fit(y, 12) for y in windows]
    reports = [fold_fit_summary(spec, f, y, 12) for f, y in zip(fits, windows, strict=True)]
    summary = summarise_folds(reports, [f.params for f in fits])
    rows = _by_name(summary)
    assert set(rows) == {"drift", "ma.L1", "sigma2"}
    assert summary["share_converged"] == 1.0
    assert summary["ljung_box"]["n_tested"] == 3
    assert rows["drift"]["n_tested"] == 3 and rows["sigma2"]["n_tested"] == 0
    assert rows["ma.L1"]["path"] == [f.params["ma.L1"] for f in fits]
    json.dumps(summary, allow_nan=False)
