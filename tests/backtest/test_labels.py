"""Foldline's model-label notation (``backtest/labels.py``) across every family."""

import itertools
import re

import pytest

from backtest.candidates import parse_candidate, parse_candidates
from backtest.errors import CandidateError
from backtest.labels import COLUMN
from tests.conftest import BRACKETED_LABEL

#: A bracketed seasonal period such as ``[12]``: not Foldline's notation.
BRACKETED_PERIOD = re.compile(r"\[\d+\]")


def _label(body: dict, m: int = 12) -> str:
    return parse_candidate(body).label(m)


def _valid(body: dict) -> bool:
    try:
        parse_candidate(body).spec.check(12)
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
    singles = [body for body in out if _valid(body)]
    return singles + _with_intervals(singles) + _combinations(singles)


#: The interval options a candidate may carry besides its model's own.
EMPIRICAL = [{"kind": "empirical"}, {"kind": "empirical", "errors": "scaled"},
             {"kind": "empirical", "min_errors": 12},
             {"kind": "empirical", "errors": "scaled", "min_errors": 30}]


def _with_intervals(singles: list[dict]) -> list[dict]:
    """Every single-model variant with every empirical-interval option."""
    return [{**body, "intervals": option} for body in singles for option in EMPIRICAL]


def _combinations(singles: list[dict]) -> list[dict]:
    """Combinations of every rule: pairs and triples of different families, the same
    families with other specs, eight members, and each with the interval options."""
    by_family: dict[str, list[dict]] = {}
    for body in singles:
        by_family.setdefault(body["family"], []).append(body)
    member_sets = [[by_family["arima"][k], by_family["ets"][k]] for k in range(6)]
    member_sets += [[by_family["arima"][k], by_family["ets"][k], by_family["theta"][k]]
                    for k in range(6)]
    member_sets += [by_family["benchmark"][:2], by_family["benchmark"][1:3],
                    [by_family["arima_search"][0], by_family["theta"][0]],
                    [by_family["arima"][0], by_family["arima"][1]],
                    [by_family["arima"][1], by_family["arima"][0]],
                    singles[:8], singles[1:9]]
    out = [{"family": "combination", "members": members, "rule": rule, "intervals": option}
           for members in member_sets for rule in ("mean", "median", "confidence_set")
           for option in ["model", *EMPIRICAL]]
    return [body for body in out if _valid(body)]


def test_every_family_has_its_notation():
    assert _label({"family": "arima", "order": [1, 0, 0],
                   "seasonal": {"order": [0, 1, 1]}, "deterministic": "drift"}) == (
        "ARIMA(1,0,0)×(0,1,1), m=12, drift")
    assert _label({"family": "arima", "order": [1, 0, 0], "deterministic": "constant",
                   "transform": "log"}) == "ARIMA(1,0,0), const, log"
    assert _label({"family": "ets", "error": "additive", "trend": "damped",
                   "season": "additive"}) == "ETS(A,Ad,A), m=12"
    assert _label({"family": "ets", "trend": "none", "season": "none",
                   "transform": {"kind": "boxcox", "lambda": 0.5}}) == "ETS(A,N,N), λ=0.5"
    assert _label({"family": "theta"}) == "Theta, m=12 if tested"
    assert _label({"family": "theta", "season": "always",
                   "decomposition": "multiplicative"}) == "Theta, mult. m=12"
    assert _label({"family": "theta"}, m=1) == "Theta"
    assert _label({"family": "benchmark", "method": "seasonal_naive"}) == (
        "Seasonal naive, m=12")
    assert _label({"family": "benchmark", "method": "drift"}) == "Drift"
    assert _label({"family": "arima_search"}) == "ARIMA by AICc, m=12"
    assert _label({"family": "arima_search", "max_order": {"p": 5}, "criterion": "bic"}) == (
        "ARIMA by BIC, m=12, ≤(5,2,3)×(1,1,1)")
    assert _label({"family": "theta", "intervals": {"kind": "empirical", "min_errors": 12,
                                                    "errors": "scaled"}}) == (
        "Theta, m=12 if tested, emp sc ≥12")
    combination = _label({"family": "combination", "members": [
        {"family": "arima", "order": [0, 1, 1]}, {"family": "ets"}, {"family": "theta"}]})
    assert re.fullmatch(r"Mean of ARIMA\+ETS\+Theta #[0-9a-f]{4}, emp", combination)
    assert _label({"family": "combination", "rule": "confidence_set", "intervals": "model",
                   "members": [{"family": "benchmark", "method": m}
                               for m in ("naive", "seasonal_naive", "drift", "mean")]}
                  ).startswith("MCS of 4 models #")


def test_different_specs_give_different_labels():
    variants = _variants()
    labels = [_label(body) for body in variants]
    seen: dict[str, dict] = {}
    for body, label in zip(variants, labels):
        assert label not in seen, f"{body} and {seen[label]} share the label {label!r}"
        seen[label] = body
    assert len(seen) > 150
    assert sum(body["family"] == "combination" for body in variants) > 150
    assert sum("intervals" in body for body in variants) > 800


@pytest.mark.parametrize("m", [1, 4, 7, 12, 52])
def test_every_label_fits_a_40_character_column(m):
    """Every variant, with every interval option and as combinations of every rule, is at
    most 40 characters; only some that change many settings at once are cut (and tagged
    by their id; about 10 % of these deliberately crowded variants), never a common one."""
    variants = _variants()
    labels = [_label(body, m) for body in variants]
    too_long = [label for label in labels if len(label) > COLUMN]
    assert COLUMN == 40 and not too_long, too_long
    cut = [label for label in labels if "…#" in label]
    assert len(cut) < 0.12 * len(labels), cut
    common = [{"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
               "transform": "log", "intervals": {"kind": "empirical"}},
              {"family": "theta", "intervals": {"kind": "empirical", "min_errors": 12}},
              {"family": "ets", "error": "multiplicative", "trend": "damped",
               "season": "multiplicative", "intervals": {"kind": "empirical",
                                                          "errors": "scaled"}},
              {"family": "combination", "rule": "confidence_set", "members": [
                  {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]}},
                  {"family": "ets"}, {"family": "theta"}]}]
    assert not [_label(body, m) for body in common if "…" in _label(body, m)]


def test_a_label_cut_to_the_column_keeps_whole_qualifiers_and_its_spec_apart():
    many = {"family": "arima_search", "max_order": {"p": 5}, "max_models": 60,
            "seasonal_strength_threshold": 0.5, "max_inverse_root": 0.98,
            "transform": {"kind": "boxcox", "lambda": -1.25},
            "intervals": {"kind": "empirical", "errors": "scaled", "min_errors": 30}}
    other = {**many, "max_inverse_root": 0.97}
    cut, cut_other = _label(many), _label(other)
    candidate = parse_candidate(many)
    assert cut.endswith("…#" + candidate.id[1:5]) and len(cut) <= 40
    assert cut.startswith("ARIMA by AICc, m=12, ≤(5,2,3)×(1,1,1)"[:len(cut) - 6])
    assert cut != cut_other


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
    assert not [label for label in common if "…" in label], common


def test_the_output_check_recognises_bracketed_labels():
    """The pattern the demo and page tests grep for finds the old notation, not ours."""
    old = ["ARIMA(0,1,1)(0,1,1)[12] log", "Theta[4]", "Seasonal naive[12]", "ARIMA search[12]"]
    assert all(BRACKETED_LABEL.search(label) for label in old)
    assert not any(BRACKETED_LABEL.search(_label(body)) for body in _variants())
