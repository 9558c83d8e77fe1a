"""The score registry: every score Foldline computes, in the order it is reported.

Every list of scores derives from :data:`SCORES`: the order of a candidate's scores (the
scores table, ``scores.csv``, the stored rows), the scores a plan may rank by, the scores
the BI ranking (``GET /v1/rankings``) accepts with their interval-level rules, the
per-origin loss behind the comparisons and the confidence set, and the contributor
guide's table (a test reads DEVELOPERS.md against this module). The scores themselves are
computed in :mod:`backtest.scoring` from :mod:`backtest.metrics`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

Group = Literal["point", "distribution", "level"]
"""``point``: from point forecasts; ``distribution``: from the predictive distribution,
pooled over the plan's levels (level ``None``); ``level``: one value per interval level."""
Loss = Literal["absolute", "squared", "origin_root", "distribution"]
"""The per-origin loss the comparisons use when ranking by the score: the absolute or
squared scaled error, the absolute value of each origin's root mean square scaled error,
or the fold's distribution score over its MASE scale (:mod:`backtest.evidence`)."""
LevelRule = Literal["none", "required", "optional"]


@dataclass(frozen=True)
class ScoreKind:
    """One registered score. ``lower_is_better`` makes it rankable; ``loss`` is the
    per-origin comparison loss of a score a plan may rank by (rankable, no level)."""

    name: str
    group: Group
    lower_is_better: bool
    loss: Loss | None = None
    fold_counted: bool = False  # its count is of folds, not of points


SCORES: tuple[ScoreKind, ...] = (
    ScoreKind("mase", "point", True, "absolute"),
    ScoreKind("rmsse", "point", True, "squared"),
    ScoreKind("rmsse_fold_mean", "point", True, "origin_root", fold_counted=True),
    ScoreKind("smape", "point", True, "absolute"),
    ScoreKind("mae", "point", True, "absolute"),
    ScoreKind("rmse", "point", True, "squared"),
    ScoreKind("me", "point", False),
    ScoreKind("crps", "distribution", True, "distribution"),
    ScoreKind("pinball", "distribution", True, "distribution"),
    ScoreKind("scaled_pinball", "distribution", True, "distribution"),
    ScoreKind("coverage", "level", False),
    ScoreKind("winkler", "level", True),
    ScoreKind("msis", "level", True),
    ScoreKind("pinball", "level", True),
)
"""In reporting order: point scores, distribution scores, then per interval level."""


def _names(group: Group) -> tuple[str, ...]:
    return tuple(s.name for s in SCORES if s.group == group)


POINT_METRICS = _names("point")
DISTRIBUTION_METRICS = _names("distribution")
LEVEL_METRICS = _names("level")
FOLD_COUNTED = tuple(s.name for s in SCORES if s.fold_counted)
RANK_SCORES = tuple(s.name for s in SCORES if s.lower_is_better and s.group != "level")
"""Scores a plan may rank by (no interval level; lower is better)."""
RANKABLE = tuple(dict.fromkeys(s.name for s in SCORES if s.lower_is_better))
"""Scores the BI ranking accepts (lower is better): the plan's, and the interval scores."""


def level_rule(name: str) -> LevelRule:
    """Whether a score of this name needs an interval level: ``required`` if it exists
    only per level, ``optional`` if also pooled over the levels, else ``none``."""
    groups = {s.group for s in SCORES if s.name == name}
    if "level" not in groups:
        return "none"
    return "required" if groups == {"level"} else "optional"


def loss_of(name: str) -> Loss:
    """The per-origin comparison loss of a score a plan may rank by."""
    loss = next((s.loss for s in SCORES if s.name == name and s.loss is not None), None)
    if loss is None:
        raise KeyError(f"{name!r} is not a score a plan may rank by")
    return loss
