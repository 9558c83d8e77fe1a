"""Candidate specs: canonical ids and the rejection of impossible models."""

import numpy as np
import pytest

from backtest.candidates import parse_candidate, parse_candidates
from backtest.engine import run_backtest
from backtest.errors import CandidateError
from backtest.plan import parse_plan
from backtest.series import make_series


def test_id_is_stable_under_key_order_and_defaults():
    a = parse_candidate({"family": "arima", "order": [1, 1, 0], "deterministic": "drift"})
    b = parse_candidate({"deterministic": "drift", "transform": "none", "order": [1, 1, 0],
                         "family": "arima", "seasonal": None})
    c = parse_candidate({"family": "arima", "order": [1, 1, 0]})
    assert a.id == b.id != c.id
    assert a.id.startswith("c") and len(a.id) == 17


def test_labels():
    spec = {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
            "transform": {"kind": "boxcox", "lambda": 0.5}}
    assert parse_candidate(spec).label(12) == "ARIMA(0,1,1)×(0,1,1), m=12, λ=0.5"
    ets = {"family": "ets", "error": "multiplicative", "trend": "damped", "season": "additive"}
    assert parse_candidate(ets).label(4) == "ETS(M,Ad,A), m=4"


@pytest.mark.parametrize(("body", "message"), [
    ({"family": "arima", "order": [1, 1, 0], "deterministic": "constant"},
     r"a constant needs d \+ D = 0 \(here 1\)"),
    ({"family": "arima", "order": [1, 0, 0], "deterministic": "drift"},
     r"drift needs d \+ D = 1 \(here 0\)"),
    ({"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
      "deterministic": "drift"}, r"drift needs d \+ D = 1 \(here 2\)"),
    ({"family": "arima", "order": [1, 1]}, r"arima order must be a list of three integers"),
    ({"family": "arima", "order": [1, -1, 0]}, r"second entry must be an integer from 0 to 2"),
    ({"family": "arima", "order": [1, 0, 0], "trend": "c"}, r"unknown field\(s\) trend"),
    ({"family": "arima", "order": [0, 1, 1], "transform": "sqrt"}, r"transform 'sqrt'"),
    ({"family": "arima", "order": [0, 1, 1], "transform": {"kind": "boxcox", "lambda": 7}},
     r"lambda 7 is outside"),
    ({"family": "ets", "error": "none"}, r"ets error must be one of additive, multiplicative"),
    ({"family": "benchmark", "method": "average"}, r"benchmark method must be one of"),
    ({"family": "crystal_ball"}, r"candidate family 'crystal_ball' is unknown"),
    ([1, 2], r"a candidate must be a JSON object"),
])
def test_impossible_specs_are_rejected_with_a_reason(body, message):
    with pytest.raises(CandidateError, match=message):
        parse_candidate(body)


def test_list_errors_name_the_position_and_duplicates():
    with pytest.raises(CandidateError, match=r"candidate 2: ets trend"):
        parse_candidates([{"family": "theta"}, {"family": "ets", "trend": "cubic"}])
    with pytest.raises(CandidateError, match=r"candidate 2 repeats an earlier candidate"):
        parse_candidates([{"family": "theta"}, {"family": "theta", "season": "test"}])
    with pytest.raises(CandidateError, match=r"empty"):
        parse_candidates([])


def _series(values, key="cash"):
    return make_series(key, "P1M", [(f"{2020 + i // 12}-{i % 12 + 1:02d}", v)
                                    for i, v in enumerate(values)])


def test_transforms_need_positive_data():
    series = _series(np.r_[np.linspace(5, 10, 30), -1.0, np.linspace(5, 10, 9)])
    log = parse_candidates([{"family": "arima", "order": [0, 1, 1], "transform": "log"}])
    with pytest.raises(CandidateError, match=r"needs strictly positive data, but series 'cash' "
                                             r"has -1 at period 2022-07"):
        run_backtest([series], log, parse_plan({"horizon": 3}))


def test_seasonal_part_needs_a_seasonal_series():
    yearly = make_series("y", "P1Y", [(str(2000 + i), float(i)) for i in range(30)])
    seasonal = parse_candidates([{"family": "arima", "order": [0, 1, 1],
                                  "seasonal": {"order": [0, 1, 1]}}])
    with pytest.raises(CandidateError, match=r"needs a period of at least 2"):
        run_backtest([yearly], seasonal, parse_plan({"horizon": 2, "benchmark": "naive"}))
