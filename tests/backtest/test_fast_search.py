"""The order search under the fast estimator chooses what the reference search chooses, or
an order at least as good by the criterion; its stopping rule costs no visible likelihood."""

from __future__ import annotations

import pytest

from backtest.models.fast_arima import fast_estimate
from tests.backtest.fast_arima_corpus import corpus, origins
from tests.backtest.search_validation import CRITERION_TOLERANCE, cases, compare


@pytest.mark.parametrize("case", cases("ci"), ids=lambda case: case.name)
def test_the_fast_search_chooses_the_reference_order_or_a_better_one(case):
    result = compare(case)
    assert result.same or result.criterion_gap <= CRITERION_TOLERANCE, (
        f"fast chose {result.fast.label(case.season_length)} "
        f"(AICc {result.fast_criterion:.6f}), reference "
        f"{result.reference.label(case.season_length)} (AICc {result.reference_criterion:.6f})")


def test_the_search_stopping_rule_loses_no_likelihood_that_matters():
    """Every corpus model at three origins: the search's looser stop against the strict
    one, on the objective (the 1e-6 log-likelihood standard of the estimator's validation)."""
    for item in corpus("ci"):
        for spec in item.specs:
            for end in origins(item, spec, 3):
                y = item.values[:end]
                strict = fast_estimate(spec, y, item.season_length)
                screened = fast_estimate(spec, y, item.season_length, screening=True)
                assert screened.llf >= strict.llf - 1e-6, (item.name, spec, end)
