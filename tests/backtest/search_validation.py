"""Validation cases of the order search under the fast estimator: the order it chooses
against the reference search's on the same training window.

Used by ``tests/backtest/test_fast_search.py`` (a CI-sized part) and
``bench/fast_arima_bench.py`` (every case). The cases are the fast estimator's validation
corpus series (``fast_arima_corpus.py``: Series G, statsmodels' open datasets, generated
ARIMA series), each searched with the ``arima_search`` defaults at the end of the series
and one year (or season) earlier.

Where the two searches choose different orders, the fast choice is judged through the
objective: both chosen orders are estimated by the fast estimator at strict precision (the
exact likelihood) and their criteria compared (lower is better); the fast search must not
choose the worse one by more than :data:`CRITERION_TOLERANCE`.
"""

from __future__ import annotations

import math
import time
import warnings
from dataclasses import dataclass

import numpy as np

from backtest.models.arima import ArimaSpec
from backtest.models.arima_search import ArimaSearchSpec
from backtest.models.fast_arima import fast_estimate
from backtest.models.fast_arima_trial import information_criterion
from tests.backtest.fast_arima_corpus import corpus

#: Criterion (AICc, i.e. -2 log-likelihood + penalty) the fast choice may lose.
CRITERION_TOLERANCE = 2e-6
#: Cases of the CI-sized part: (series name, windows ending this many periods early).
CI_CASES = (("Series G, log", 0), ("Series G, log", 12), ("Series G, log", 24),
            ("Nile", 0), ("generated ARMA(1,2) constant", 0), ("generated airline", 0))


@dataclass(frozen=True)
class SearchCase:
    """One training window to search."""

    name: str
    values: np.ndarray
    season_length: int


@dataclass(frozen=True)
class SearchComparison:
    """The two searches' choices on one case, with their strict fast criteria."""

    case: SearchCase
    fast: ArimaSpec
    reference: ArimaSpec
    fast_seconds: float
    reference_seconds: float
    fast_criterion: float
    reference_criterion: float
    fast_loglike: float
    reference_loglike: float

    @property
    def same(self) -> bool:
        return self.fast == self.reference

    @property
    def criterion_gap(self) -> float:
        """Fast choice's criterion minus the reference choice's (at most 0 is as good)."""
        return self.fast_criterion - self.reference_criterion


def cases(size: str = "ci") -> list[SearchCase]:
    """``"ci"``: :data:`CI_CASES`; ``"full"``: every corpus series, two window ends."""
    series = {item.name: item for item in corpus("full")}
    if size == "ci":
        chosen = CI_CASES
    else:
        chosen = tuple((name, back) for name in series for back in (0, 12))
    out = []
    for name, back in chosen:
        item = series[name]
        early = back if item.season_length > 1 else back // 3
        values = item.values[:len(item.values) - early] if early else item.values
        label = f"{name}, {len(values)} obs"
        out.append(SearchCase(label, values, item.season_length))
    return out


def compare(case: SearchCase) -> SearchComparison:
    """Both searches on ``case``, timed (CPU), their choices and strict criteria."""
    spec, y, m = ArimaSearchSpec(), case.values, case.season_length
    chosen, seconds = {}, {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for estimator in ("fast", "reference"):
            began = time.process_time()
            fit = spec.fit(y, m, estimator=estimator, keep_raw=False)
            seconds[estimator] = time.process_time() - began
            chosen[estimator] = spec.chosen(fit.params)[0]
        strict = {name: _strict(model, y, m) for name, model in chosen.items()}
    return SearchComparison(case, chosen["fast"], chosen["reference"], seconds["fast"],
                            seconds["reference"], strict["fast"][0], strict["reference"][0],
                            strict["fast"][1], strict["reference"][1])


def _strict(model: ArimaSpec, y: np.ndarray, season_length: int) -> tuple[float, float]:
    """AICc and log-likelihood of ``model``'s strict fast estimate."""
    try:
        estimate = fast_estimate(model, y, season_length)
    except Exception:  # an order the fast estimator cannot fit at all scores worst
        return math.inf, -math.inf
    return information_criterion(estimate, "aicc"), estimate.llf
