"""The monitoring flags on simulated ledgers of a correctly specified AR(1) (see simulated.py).

False alarms: over many independent simulated ledgers of a well-specified model, the
share that raises each flag must lie inside the central 99 % range of
Binomial(ledgers, rate) (scipy.stats.binom), where rate is the rule's false-alarm rate: the
exact size of the coverage rule (at most 5 %), 5 % for the Mann-Whitney accuracy test, and
at most 5 % for the CUSUM (its boundary is for a continuous path; a discrete path crosses
less often, so only the upper end is checked).
Detection: a level shift of 4 sigma in the series (2 sd of the one-step errors, phi = 0.5)
is flagged by the monthly re-run CUSUM within 15 actuals after the shift in at least 95 %
of simulations, with a median delay of at most 10.
"""

import numpy as np
import pytest
from scipy import stats

from backtest.ledger import expectation_from_folds, monitor
from backtest.ledger.coverage_flag import coverage_false_alarm_rate

from .simulated import Ar1, ledger, monthly_series, with_outcomes_until

LEDGERS = 400
ISSUES = 36
BACKTEST_FOLDS = 36
FALSE_ALARM = 0.05
MODEL = Ar1(mean=100.0, phi=0.5, sigma=5.0, horizon=2)
DETECTION_RUNS = 100
SHIFT_AT_ISSUE = 24
DETECTION_PERIODS = 15


def simulated_ledger(rng, shift_at=None, issues=ISSUES):
    """A backtest's folds on one stretch, then ``issues`` monthly issues on the next; the
    expectation from those folds is left out (None) for a shifted ledger."""
    warmup = 10
    first_issue = warmup + BACKTEST_FOLDS + MODEL.horizon
    n = first_issue + issues + MODEL.horizon - 1
    shift = None if shift_at is None else first_issue + shift_at
    y = MODEL.path(rng, n, shift_at=shift, shift=4 * MODEL.sigma)
    history = ledger(MODEL, monthly_series(y), first_issue, issues)
    if shift_at is not None:
        return history, None
    folds = [MODEL.fold(y, warmup + k, k) for k in range(BACKTEST_FOLDS)]
    return history, expectation_from_folds(folds, "car1")


@pytest.fixture(scope="module")
def raised_counts():
    rng = np.random.default_rng(20260107)
    counts: dict[tuple[str, int | None], int] = {}
    for _ in range(LEDGERS):
        history, expectation = simulated_ledger(rng)
        for flag in monitor(history, expectation, false_alarm=FALSE_ALARM).flags:
            assert flag.p_value is not None, flag.detail  # enough data for every rule
            counts[flag.rule, flag.level] = counts.get((flag.rule, flag.level), 0) + flag.raised
    return counts


def binomial_99(rate):
    return stats.binom.ppf(0.005, LEDGERS, rate), stats.binom.ppf(0.995, LEDGERS, rate)


@pytest.mark.parametrize("level", [80, 95])
def test_coverage_flag_false_alarms_match_the_rule_size(raised_counts, level):
    size = coverage_false_alarm_rate(ISSUES, level, FALSE_ALARM)
    assert 0.01 < size <= FALSE_ALARM + 1e-4  # exact size of the rule at 36 trials
    low, high = binomial_99(size)
    assert low <= raised_counts["coverage", level] <= high


def test_accuracy_flag_false_alarms_match_the_stated_rate(raised_counts):
    low, high = binomial_99(FALSE_ALARM)
    assert low <= raised_counts["accuracy", None] <= high


def test_level_shift_false_alarms_stay_below_the_stated_rate(raised_counts):
    assert raised_counts["level_shift", None] <= binomial_99(FALSE_ALARM)[1]


def test_level_shift_is_flagged_soon_after_it_happens():
    rng = np.random.default_rng(7)
    delays = []
    for _ in range(DETECTION_RUNS):
        history, _ = simulated_ledger(rng, shift_at=SHIFT_AT_ISSUE,
                                      issues=SHIFT_AT_ISSUE + DETECTION_PERIODS)
        delays.append(_periods_until_flagged(history))
    flagged = [d for d in delays if d is not None]
    assert len(flagged) >= 0.95 * DETECTION_RUNS
    assert np.median(flagged) <= 10


def _periods_until_flagged(history):
    """Actuals observed after the shift when the monthly re-run first flags it."""
    for k in range(1, DETECTION_PERIODS + 1):
        last = history[SHIFT_AT_ISSUE + k - 1].forecast.periods[0]
        flags = monitor(with_outcomes_until(history, last), None).flags
        if next(f for f in flags if f.rule == "level_shift").raised:
            return k
    return None
