"""Foldline's model-label notation (``backtest/labels.py``) across every family."""

import itertools
import re

import pytest

from backtest.candidates import parse_candidates
from backtest.errors import CandidateError
from backtest.models import FAMILIES
from tests.conftest import BRACKETED_LABEL

#: A bracketed seasonal period such as ``[12]``: not Foldline's notation.
BRACKETED_PERIOD = re.compile(r"\[\d+\]")


def _label(body: dict, m: int = 12) -> str:
    return FAMILIES[body["family"]](body).label(m)


def _valid(body: dict) -> bool:
    try:
        FAMILIES[body["family"]](body).check(12)
    except CandidateError:
        return False
    return True


def _variants() -> list[dict]:
    """Valid specs that forecast differently on a monthly series: every field of every
    family."""
    out: list[dict] = []
    transforms = ["none", "log", {"kind": "boxcox", "lambda": 0.5}]
    for order, seasonal, term, transform in itertools.product(
            [[1, 0, 0], [0, 1, 1], [2, 1, 2]],
            [None, {"order": [0, 1, 1], "period": 12}, {"order": [0, 1, 1], "period": 4},
             {"order": [1, 0, 0], "period": 12}],
            ["none", "constant", "drift"], transforms):
        out.append({"family": "arima", "order": order, "seasonal": seasonal,
                    "deterministic": term, "transform": transform})
    for error, trend, season, period, transform in itertools.product(
            ["additive", "multiplicative"], ["none", "additive", "damped"],
            ["none", "additive", "multiplicative"], [None, 4], transforms):
        if season == "none" and period is not None:
            continue  # the period of a non-seasonal model changes nothing
        out.append({"family": "ets", "error": error, "trend": trend, "season": season,
                    "period": period, "transform": transform})
    for season, decomposition, period, transform in itertools.product(
            ["test", "always", "never"], ["auto", "additive", "multiplicative"], [None, 4],
            transforms):
        if season == "never" and period is not None:
            continue
        out.append({"family": "theta", "season": season, "decomposition": decomposition,
                    "period": period, "transform": transform})
    out += [{"family": "benchmark", "method": m}
            for m in ("naive", "seasonal_naive", "drift", "mean")]
    search_changes = [{}, {"criterion": "bic"}, {"criterion": "aic"}, {"seasonal": False},
                      {"period": 4}, {"max_order": {"p": 5}}, {"max_order": {"Q": 2}},
                      {"max_models": 60}, {"seasonal_strength_threshold": 0.5},
                      {"max_inverse_root": 0.98}, {"transform": "log"}]
    out += [{"family": "arima_search", **change} for change in search_changes]
    return [body for body in out if _valid(body)]


def test_every_family_has_its_notation():
    assert _label({"family": "arima", "order": [1, 0, 0],
                   "seasonal": {"order": [0, 1, 1]}, "deterministic": "drift"}) == (
        "ARIMA(1,0,0)×(0,1,1), season 12, drift")
    assert _label({"family": "arima", "order": [0, 1, 1], "transform": "log"}) == (
        "ARIMA(0,1,1), log")
    assert _label({"family": "ets", "error": "additive", "trend": "damped",
                   "season": "additive"}) == "ETS(A,Ad,A), season 12"
    assert _label({"family": "ets", "trend": "none", "season": "none",
                   "transform": {"kind": "boxcox", "lambda": 0.5}}) == "ETS(A,N,N), Box-Cox 0.5"
    assert _label({"family": "theta"}) == "Theta, season 12 if tested"
    assert _label({"family": "theta", "season": "always",
                   "decomposition": "multiplicative"}) == "Theta, mult. season 12"
    assert _label({"family": "theta"}, m=1) == "Theta"
    assert _label({"family": "benchmark", "method": "seasonal_naive"}) == (
        "Seasonal naive, season 12")
    assert _label({"family": "benchmark", "method": "drift"}) == "Drift"
    assert _label({"family": "arima_search"}) == "ARIMA search by AICc, season 12"
    assert _label({"family": "arima_search", "max_order": {"p": 5}, "criterion": "bic"}) == (
        "ARIMA search by BIC, season 12, up to (5,2,3)×(1,1,1)")


def test_different_specs_give_different_labels():
    variants = _variants()
    labels = [_label(body) for body in variants]
    seen: dict[str, dict] = {}
    for body, label in zip(variants, labels):
        assert label not in seen, f"{body} and {seen[label]} share the label {label!r}"
        seen[label] = body
    assert len(seen) > 150


def test_two_theta_specs_on_a_quarterly_series_differ():
    """The case that prompted the notation: both used to print the same label."""
    tested = _label({"family": "theta", "season": "test"}, m=4)
    always = _label({"family": "theta", "season": "always"}, m=4)
    assert tested != always


@pytest.mark.parametrize("m", [1, 4, 7, 12, 52])
def test_labels_have_no_bracketed_period_and_fit_a_column(m):
    labels = [_label(body, m) for body in _variants()]
    assert not [label for label in labels if BRACKETED_PERIOD.search(label)]
    common = [candidate.label(m) for candidate in parse_candidates([
        {"family": "arima", "order": [1, 1, 1], "seasonal": {"order": [0, 1, 1]},
         "deterministic": "none", "transform": "log"},
        {"family": "ets", "error": "multiplicative", "trend": "damped",
         "season": "multiplicative"},
        {"family": "theta", "decomposition": "multiplicative"},
        {"family": "arima_search", "transform": "log"},
        {"family": "benchmark", "method": "seasonal_naive"}])]
    assert max(len(label) for label in common) <= 40, common


def test_the_output_check_recognises_bracketed_labels():
    """The pattern the demo and page tests grep for finds the old notation, not ours."""
    old = ["ARIMA(0,1,1)(0,1,1)[12] log", "Theta[4]", "Seasonal naive[12]", "ARIMA search[12]"]
    assert all(BRACKETED_LABEL.search(label) for label in old)
    assert not any(BRACKETED_LABEL.search(_label(body)) for body in _variants())
