"""Candidate models: parsing the JSON spec, its canonical form and its stable id.

A candidate is a JSON object with a ``family`` field and that family's options (see
DEVELOPERS.md, "Candidate specs"). Its canonical form fills every default and sorts keys;
its id is ``"c"`` followed by the first 16 hex digits of the SHA-256 of that text, so the
same spec written in any key order, with or without defaults, gets the same id.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

from backtest.errors import CandidateError
from backtest.labels import compose, fit_column
from backtest.models import FAMILIES, ModelSpec
from backtest.recalibration import EmpiricalIntervals, parse_intervals


@dataclass(frozen=True)
class Candidate:
    """A parsed candidate: its spec, canonical JSON text and stable id.

    ``intervals`` asks for empirical intervals (:mod:`backtest.recalibration`); the
    canonical form names it only when given, so the ids of candidates that use their
    model's own intervals do not depend on the option's existence.
    """

    spec: ModelSpec
    intervals: EmpiricalIntervals | None = None

    @property
    def canonical(self) -> dict[str, Any]:
        """The canonical spec, ``family`` included."""
        extra = {} if self.intervals is None else {"intervals": self.intervals.canonical()}
        return {"family": self.spec.family, **self.spec.body(), **extra}

    @property
    def canonical_json(self) -> str:
        return json.dumps(self.canonical, sort_keys=True, separators=(",", ":"))

    @property
    def id(self) -> str:
        return "c" + hashlib.sha256(self.canonical_json.encode()).hexdigest()[:16]

    def label(self, season_length: int) -> str:
        """The spec's label with the intervals' qualifier, fitted to a column
        (:func:`backtest.labels.fit_column`, tagged by the id)."""
        qualifier = None if self.intervals is None else self.intervals.qualifier()
        return fit_column(compose(self.spec.label(season_length), qualifier), self.id[1:5])


def parse_candidate(body: object) -> Candidate:
    """Parse one candidate spec; raise :class:`CandidateError` saying what is wrong."""
    if not isinstance(body, Mapping):
        raise CandidateError(f"a candidate must be a JSON object, got {type(body).__name__}")
    family = body.get("family")
    if family not in FAMILIES:
        raise CandidateError(f"candidate family {family!r} is unknown; "
                             f"use one of {', '.join(sorted(FAMILIES))}")
    # a combination has no intervals of its own worth keeping: empirical by default
    default = EmpiricalIntervals().canonical() if family == "combination" else "model"
    intervals = parse_intervals(body.get("intervals", default))
    return Candidate(FAMILIES[family]({k: v for k, v in body.items() if k != "intervals"}),
                     intervals)


def parse_candidates(bodies: Iterable[object]) -> tuple[Candidate, ...]:
    """Parse a list of specs; the message names the (1-based) position of a bad one.

    Duplicates (same canonical spec) are rejected, since they would be ranked twice.
    """
    if isinstance(bodies, Mapping | str) or not isinstance(bodies, Iterable):
        raise CandidateError("candidates must be a JSON list of candidate objects")
    out: list[Candidate] = []
    for position, body in enumerate(bodies, start=1):
        try:
            candidate = parse_candidate(body)
        except CandidateError as exc:
            raise CandidateError(f"candidate {position}: {exc}", position=position) from None
        if any(c.id == candidate.id for c in out):
            raise CandidateError(f"candidate {position} repeats an earlier candidate "
                                 f"({candidate.canonical_json})", position=position)
        out.append(candidate)
    if not out:
        raise CandidateError("the candidate list is empty")
    return tuple(out)
