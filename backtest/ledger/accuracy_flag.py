"""The accuracy flag: is the champion doing worse than its backtest promised?

Compares the realised one-step scaled absolute errors |actual - point| / scale (scale:
the MASE denominator of each issuing version), one per forecast origin, with the
backtest's one-step scaled absolute errors of the same candidate (each fold's own scale).
Both samples hold one error per origin, so neither has overlapping forecasts. The test is
the one-sided Mann-Whitney U test (Mann & Whitney 1947; ``scipy.stats.mannwhitneyu``,
``alternative="greater"``): the flag is raised when realised errors are stochastically
larger than the backtest's with p < ``false_alarm``, which is then the false-alarm rate
(for independent errors of continuous distribution). It tests a shift of the whole error
distribution, of which a higher MASE is the usual consequence, and unlike a test of means
is not carried by one outlier. ``statistic`` is the ratio of realised to backtest
one-step MASE. ``not_enough_data``, with a note, without an expectation, with fewer than
:data:`MIN_ACCURACY_OUTCOMES` realised or :data:`MIN_BACKTEST_ERRORS` backtest errors.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from scipy import stats

from backtest.ledger.expectation import Expectation
from backtest.ledger.flag import Flag, not_enough_data, tested
from backtest.ledger.outcomes import Outcome

MIN_ACCURACY_OUTCOMES = 6
MIN_BACKTEST_ERRORS = 10


def accuracy_flag(one_step: Sequence[Outcome], expectation: Expectation | None,
                  false_alarm: float) -> Flag:
    """The accuracy verdict on the one-step ``outcomes`` (one per origin, in time order)."""
    realised = np.abs([o.scaled_error for o in one_step])
    if expectation is None:
        return not_enough_data("accuracy", "no backtest expectation to compare with",
                               len(realised), MIN_ACCURACY_OUTCOMES)
    backtest = np.asarray(expectation.scaled_abs_errors.get(1, ()), dtype=float)
    if len(realised) < MIN_ACCURACY_OUTCOMES or len(backtest) < MIN_BACKTEST_ERRORS:
        return not_enough_data("accuracy", f"{len(realised)} realised and {len(backtest)} "
                               "backtest one-step errors; the accuracy test needs at least "
                               f"{MIN_ACCURACY_OUTCOMES} and {MIN_BACKTEST_ERRORS}",
                               len(realised), MIN_ACCURACY_OUTCOMES)
    test = stats.mannwhitneyu(realised, backtest, alternative="greater")
    p_value = float(test.pvalue)
    ratio = float(realised.mean() / backtest.mean()) if backtest.mean() > 0 else float("inf")
    return Flag(rule="accuracy", state=tested(p_value < false_alarm), level=None, statistic=ratio,
                p_value=p_value, threshold=false_alarm, first_period=one_step[0].period,
                detail=f"one-step MASE {realised.mean():.3g} over {len(realised)} origins "
                       f"against {backtest.mean():.3g} in the backtest ({len(backtest)} "
                       f"folds), ratio {ratio:.2f}; Mann-Whitney U {test.statistic:.1f}, "
                       f"one-sided p {p_value:.3g}", outcomes=len(realised),
                needed=MIN_ACCURACY_OUTCOMES)
