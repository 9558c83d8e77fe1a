"""Typed, frozen evidence objects for one series, and their JSON form.

The engine builds these (:mod:`backtest.evidence`, :mod:`backtest.diagnosis`) and turns
them into JSON-ready dictionaries at the edge, :attr:`SeriesResult.evidence`, which
storage and the service read: ``to_dict()`` gives exactly the keys, order and values that
section has always had (DEVELOPERS.md, "Assessment evidence"). The statistical tables
inside a section (a test's statistics, a level's coverage by horizon, a fit report) are
JSON-ready mappings as their assessment functions return them (:mod:`backtest.assessment`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from backtest.assessment.comparison import Loss

Table = Mapping[str, Any]
"""A JSON-ready statistical table as an assessment function returns it."""
SCALED_ERRORS = "scaled by each fold's MASE scale"
ZONE_ORDER = ("consistent", "suspect", "excessive")


@dataclass(frozen=True)
class Report:
    """A candidate's full-series diagnostics or fold-stability summary, or why the step
    failed (``error``)."""

    table: Table | None = None
    error: str | None = None

    def to_dict(self) -> dict[str, Any]:
        return {"error": self.error} if self.table is None else dict(self.table)


@dataclass(frozen=True)
class Calibration:
    """A candidate's interval calibration: one table per interval level
    (:func:`backtest.assessment.calibration_report`)."""

    levels: tuple[Table, ...]

    @property
    def h1_zone(self) -> str | None:
        """The worst zone over the levels at h = 1 (one-step misses do not overlap)."""
        zones = [level["by_horizon"][0]["zone"] for level in self.levels
                 if level["by_horizon"]]
        zones = [z for z in zones if z is not None]
        return max(zones, key=ZONE_ORDER.index) if zones else None

    def to_dict(self) -> list[dict[str, Any]]:
        return [dict(level) for level in self.levels]


@dataclass(frozen=True)
class Comparison:
    """Forecast comparisons with the benchmark and pairwise, on scaled errors; ``reason``
    says why there is nothing to compare."""

    benchmark: Table | None
    pairwise: Table | None
    identical_forecasts: tuple[tuple[str, ...], ...]
    reason: str | None = None

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"errors": SCALED_ERRORS, "benchmark": self.benchmark,
                               "pairwise": self.pairwise}
        if self.reason is not None:
            out["reason"] = self.reason
        out["identical_forecasts"] = [list(group) for group in self.identical_forecasts]
        return out


@dataclass(frozen=True)
class RankingTests:
    """The tests behind ``beats_benchmark``: loss, size, horizon and each verdict."""

    loss: Loss
    alpha: float
    horizon: int | None
    benchmark: Mapping[str, bool | None]

    def to_dict(self) -> dict[str, Any]:
        return {"loss": self.loss, "alpha": self.alpha, "horizon": self.horizon,
                "benchmark": dict(self.benchmark)}


@dataclass(frozen=True)
class ConfidenceSet:
    """The model confidence set (:func:`backtest.assessment.model_confidence_set`'s
    table), or why there is none; ``without_loss`` names candidates left out of it."""

    table: Table | None
    reason: str | None = None
    without_loss: tuple[str, ...] = ()

    @property
    def included(self) -> frozenset[str] | None:
        """The candidates in the set; ``None`` when there is no set."""
        return None if self.table is None else frozenset(self.table["included"])

    def to_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = ({"reason": self.reason} if self.table is None
                               else dict(self.table))
        if self.without_loss:
            out["without_loss"] = list(self.without_loss)
        return out


@dataclass(frozen=True)
class SeriesEvidence:
    """Everything assessed for one series, per candidate where it applies; a step that
    failed is named in ``unavailable`` with its reason."""

    calibration: Mapping[str, Calibration | None]
    comparison: Comparison
    ranking_tests: RankingTests
    confidence_set: ConfidenceSet
    unavailable: Mapping[str, str]
    diagnostics: Mapping[str, Report | None] = field(default_factory=dict)
    stability: Mapping[str, Report | None] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {
            "calibration": {cid: _dict(c) for cid, c in self.calibration.items()},
            "comparison": self.comparison.to_dict(),
            "ranking_tests": self.ranking_tests.to_dict(),
            "confidence_set": self.confidence_set.to_dict(),
            "unavailable": dict(self.unavailable),
            "diagnostics": {cid: _dict(d) for cid, d in self.diagnostics.items()},
            "stability": {cid: _dict(s) for cid, s in self.stability.items()},
        }


def _dict(part: Report | Calibration | None) -> Any:
    return None if part is None else part.to_dict()
