"""The coverage flag: are the issued intervals holding the actuals as often as stated?

Per level, on the one-step (h = 1) outcomes, one per forecast origin, in time order. With
forecasts issued one period apart these do not overlap, so for a well-specified model
the misses are independent Bernoulli(1 - level/100) trials; longer horizons overlap and
are left to the descriptive figures. The flag is raised when

- Kupiec's (1995) proportion-of-failures LR test rejects, with its exact binomial p-value
  (:func:`backtest.assessment.calibration.kupiec_pof`, the one the backtest's calibration
  reports) rather than its chi-squared approximation, which over-rejects at the few dozen
  trials of a ledger (11.7 % instead of 5 % at 48 trials of a 95 % interval); or
- the misses fall in the ``excessive`` zone of
  :func:`backtest.assessment.calibration.calibration_zone` (binomial CDF >= 99.99 %).

The false-alarm rate is therefore at most ``false_alarm`` + 0.01 % and is exactly
:func:`coverage_false_alarm_rate`. Fewer than :data:`MIN_COVERAGE_OUTCOMES` one-step
outcomes: ``not_enough_data``.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from backtest.assessment.calibration import (
    calibration_zone,
    kupiec_null_distribution,
    kupiec_pof,
)
from backtest.ledger.flag import Flag, not_enough_data, tested
from backtest.ledger.outcomes import Outcome

MIN_COVERAGE_OUTCOMES = 12


def coverage_flags(one_step: Sequence[Outcome], false_alarm: float,
                   levels: Sequence[int] = ()) -> tuple[Flag, ...]:
    """One coverage flag per issued level (and any other found among the one-step
    ``outcomes``); without levels, one ``not_enough_data`` flag of no level."""
    levels = sorted({*levels, *(level for o in one_step for level in o.hits)})
    if not levels:
        return (not_enough_data("coverage", "no one-step outcome yet; the coverage test "
                                f"needs at least {MIN_COVERAGE_OUTCOMES}", 0,
                                MIN_COVERAGE_OUTCOMES),)
    return tuple(_level_flag([o.hits[level] for o in one_step if level in o.hits],
                             [o.period for o in one_step if level in o.hits], level,
                             false_alarm) for level in levels)


def coverage_false_alarm_rate(trials: int, level: int, false_alarm: float) -> float:
    """Exact probability that the flag is raised when the intervals are right."""
    rate = (100 - level) / 100.0
    pmf = kupiec_null_distribution(trials, rate)[1]
    raised = [_raised(misses, trials, rate, false_alarm) for misses in range(trials + 1)]
    return float(pmf[np.array(raised)].sum())


def _level_flag(hits: list[bool], periods: list[str], level: int, false_alarm: float) -> Flag:
    trials = len(hits)
    if trials < MIN_COVERAGE_OUTCOMES:
        return not_enough_data("coverage", f"{trials} one-step outcome(s) at the {level} % "
                               f"level; the coverage test needs at least "
                               f"{MIN_COVERAGE_OUTCOMES}", trials, MIN_COVERAGE_OUTCOMES,
                               level)
    rate = (100 - level) / 100.0
    misses = trials - sum(hits)
    kupiec = kupiec_pof(misses, trials, rate)
    lr, p_value = kupiec["lr"], kupiec["p_value"]
    zone = calibration_zone(misses, trials, rate)
    return Flag(rule="coverage", state=tested(_raised(misses, trials, rate, false_alarm)),
                level=level, statistic=lr, p_value=p_value, threshold=false_alarm,
                first_period=periods[0],
                detail=f"{level} % intervals held {trials - misses} of {trials} one-step "
                       f"actuals (coverage {(trials - misses) / trials:.2f}, nominal "
                       f"{level / 100:.2f}); Kupiec LR {lr:.2f}, exact p {p_value:.3g}; "
                       f"zone {zone}", outcomes=trials, needed=MIN_COVERAGE_OUTCOMES)


def _raised(misses: int, trials: int, rate: float, false_alarm: float) -> bool:
    return (kupiec_pof(misses, trials, rate)["p_value"] < false_alarm
            or calibration_zone(misses, trials, rate) == "excessive")
