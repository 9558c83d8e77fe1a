"""Forecast combinations: several member models, one forecast (Bates & Granger 1969).

A combination names its members (model specs of the other families, each with its own
transform) and a rule:

- ``mean``: the equal-weight mean of the members' point forecasts;
- ``median``: their median;
- ``confidence_set``: in a backtest, at each origin, the equal-weight mean of the members
  in the model confidence set of that origin, computed from the folds known there
  (:mod:`backtest.combining`); fitted outside a backtest (for an issued forecast) there is
  no history to select from, so it is refused there.

Bounds before any recalibration combine the members' bounds by the same rule (for the
mean, quantile averaging: for Gaussian members on the original scale this is the Gaussian
with the mean of their means and of their standard deviations). A combination's
candidate uses empirical intervals from its own past errors by default
(:mod:`backtest.recalibration`). Parameters are the members', prefixed ``<k>.`` with the
member's 1-based position.
"""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar, Literal, cast

import numpy as np

from backtest.errors import CandidateError
from backtest.labels import combination_label
from backtest.models.base import (
    Fit,
    Forecast,
    ModelSpec,
    Params,
    back_transform,
    choice,
    take_fields,
)
from backtest.transforms import Transform

Rule = Literal["mean", "median", "confidence_set"]
RULES = ("mean", "median", "confidence_set")
MAX_MEMBERS = 8


@dataclass(frozen=True)
class CombinationSpec(ModelSpec):
    """Members and the rule that combines their forecasts."""

    family: ClassVar[str] = "combination"
    members: tuple[ModelSpec, ...] = ()
    rule: Rule = "mean"
    transform: Transform = Transform()

    def body(self) -> dict[str, Any]:
        return {"members": [{"family": s.family, **s.body()} for s in self.members],
                "rule": self.rule}

    def label(self, season_length: int) -> str:
        members = [(s.family, getattr(s, "method", "")) for s in self.members]
        canonical = json.dumps(self.body()["members"], sort_keys=True, separators=(",", ":"))
        return combination_label(self.rule, members, canonical)

    def min_train(self, season_length: int) -> int:
        return max(s.min_train(season_length) for s in self.members)

    def check(self, season_length: int) -> None:
        for spec in self.members:
            spec.check(season_length)

    @property
    def needs_positive(self) -> bool:
        return any(s.needs_positive for s in self.members)

    @property
    def gaussian(self) -> bool:
        """Quantile averaging keeps Gaussian members Gaussian, on the original scale only."""
        return self.rule == "mean" and all(s.gaussian and s.transform.kind == "none"
                                           for s in self.members)

    def fit(self, y: np.ndarray, season_length: int, *,
            start_params: Params | None = None) -> Fit:
        self._refuse_selection()
        params: Params = {}
        for k, spec in enumerate(self.members, start=1):
            fitted = spec.fit(spec.transform.forward(y), season_length)
            params.update({f"{k}.{name}": v for name, v in fitted.params.items()})
        return Fit(params)

    def forecast(self, y: np.ndarray, season_length: int, params: Params, horizon: int,
                 levels: tuple[int, ...], seed: int) -> Forecast:
        self._refuse_selection()
        forecasts = []
        for k, spec in enumerate(self.members, start=1):
            own = {name[len(f"{k}."):]: v for name, v in params.items()
                   if name.startswith(f"{k}.")}
            raw = spec.forecast(spec.transform.forward(y), season_length, own, horizon, levels,
                                member_seed(seed, k))
            forecasts.append(back_transform(spec.transform, raw))
        return combine(forecasts, self.rule, levels)

    def _refuse_selection(self) -> None:
        if self.rule == "confidence_set":
            raise CandidateError("a confidence-set combination selects its members from "
                                 "backtest folds; outside a backtest use rule mean or median")


def member_seed(seed: int, position: int) -> int:
    """The simulation seed of member ``position`` (1-based) from the combination's seed."""
    return int(np.random.SeedSequence([seed, position]).generate_state(1)[0])


def combine(forecasts: Sequence[Forecast], rule: Rule, levels: Sequence[int]) -> Forecast:
    """Point forecasts and bounds combined by ``rule``: median for ``median``, else the
    equal-weight mean (the confidence-set rule passes only the selected members)."""
    op = np.median if rule == "median" else np.mean
    mean = op([f.mean for f in forecasts], axis=0)
    lower = {lv: op([f.lower[lv] for f in forecasts], axis=0) for lv in levels}
    upper = {lv: op([f.upper[lv] for f in forecasts], axis=0) for lv in levels}
    return Forecast(np.asarray(mean), lower, upper)


def parse(body: Mapping[str, Any]) -> CombinationSpec:
    """Read a ``combination`` candidate body: ``members`` (2 to 8 specs of other
    families) and ``rule``."""
    from backtest.models import FAMILIES  # the registry imports this module

    fields = take_fields(body, "combination", {"members", "rule"})
    rule = choice(fields.get("rule", "mean"), RULES, "combination rule")
    members = fields.get("members")
    if not isinstance(members, list) or not 2 <= len(members) <= MAX_MEMBERS:
        raise CandidateError(f"combination members must be a list of 2 to {MAX_MEMBERS} "
                             "candidate specs")
    specs: list[ModelSpec] = []
    for position, member in enumerate(members, start=1):
        family = member.get("family") if isinstance(member, Mapping) else None
        if family not in FAMILIES or family == "combination":
            raise CandidateError(f"combination member {position}: family {family!r} is not "
                                 "a model family (combinations do not nest)")
        try:
            spec = FAMILIES[family](member)
        except CandidateError as exc:
            raise CandidateError(f"combination member {position}: {exc}") from None
        if any(spec == other for other in specs):
            raise CandidateError(f"combination member {position} repeats an earlier member")
        specs.append(spec)
    return CombinationSpec(tuple(specs), cast(Rule, rule))
