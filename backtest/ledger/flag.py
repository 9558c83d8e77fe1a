"""A monitoring flag: one rule's verdict on a champion's realised forecasts."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

Rule = Literal["coverage", "accuracy", "level_shift"]


@dataclass(frozen=True)
class Flag:
    """The verdict of one rule (for ``coverage``, at one interval level).

    ``p_value`` is compared with ``threshold`` (the false-alarm rate): the flag is raised
    when it is smaller. ``statistic`` is the rule's own figure (Kupiec's LR, the ratio of
    realised to backtest one-step MASE, the CUSUM's largest boundary fraction) and
    ``first_period`` the earliest period the rule points at. With too little data the flag
    is not raised and ``detail`` says so.
    """

    rule: Rule
    raised: bool
    level: int | None
    statistic: float | None
    p_value: float | None
    threshold: float | None
    first_period: str | None
    detail: str


def too_little_data(rule: Rule, detail: str, level: int | None = None) -> Flag:
    """A flag that is not raised because the rule has too little to go on."""
    return Flag(rule=rule, raised=False, level=level, statistic=None, p_value=None,
                threshold=None, first_period=None, detail=detail)
