"""A monitoring flag: one rule's verdict on a champion's realised forecasts."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

Rule = Literal["coverage", "accuracy", "level_shift"]
FlagState = Literal["raised", "clear", "not_enough_data"]
"""``raised``: the rule's test rejects; ``clear``: it was tested and does not reject;
``not_enough_data``: it could not be tested (too few outcomes, or no backtest to compare
with), which says nothing either way."""


@dataclass(frozen=True)
class Flag:
    """The verdict of one rule (for ``coverage``, at one interval level).

    ``p_value`` is compared with ``threshold`` (the false-alarm rate): the state is
    ``raised`` when it is smaller, else ``clear``. ``statistic`` is the rule's own figure
    (Kupiec's LR, the ratio of realised to backtest one-step MASE, the CUSUM's largest
    boundary fraction) and ``first_period`` the earliest period the rule points at.
    ``outcomes`` is the number of one-step outcomes the rule had and ``needed`` the least
    it tests on; with too little data the state is ``not_enough_data`` and ``detail``
    says what is missing.
    """

    rule: Rule
    state: FlagState
    level: int | None
    statistic: float | None
    p_value: float | None
    threshold: float | None
    first_period: str | None
    detail: str
    outcomes: int
    needed: int

    @property
    def raised(self) -> bool:
        """Whether the rule's test rejects (``False`` also when it could not be tested)."""
        return self.state == "raised"


def not_enough_data(rule: Rule, detail: str, outcomes: int, needed: int,
                    level: int | None = None) -> Flag:
    """A flag whose rule could not be tested: ``outcomes`` one-step outcomes of ``needed``."""
    return Flag(rule=rule, state="not_enough_data", level=level, statistic=None,
                p_value=None, threshold=None, first_period=None, detail=detail,
                outcomes=outcomes, needed=needed)


def tested(raised: bool) -> FlagState:
    """The state of a rule that was tested."""
    return "raised" if raised else "clear"
