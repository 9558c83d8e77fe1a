"""Rebuilding a queued run's candidates and plan from the specs stored with it."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from backtest.candidates import Candidate, parse_candidate
from backtest.plan import Plan, parse_plan


class StoredSpecError(Exception):
    """A stored candidate spec no longer parses to the candidate it was stored as."""


def stored_candidates(specs: Sequence[Mapping[str, Any]],
                      ids: Sequence[str]) -> tuple[Candidate, ...]:
    """The run's candidates, checked to keep the ids they were stored under."""
    candidates = tuple(parse_candidate(dict(spec)) for spec in specs)
    for candidate, stored_id in zip(candidates, ids):
        if candidate.id != stored_id:
            raise StoredSpecError(f"candidate {stored_id} now parses as {candidate.id}; "
                                  "the software changed its canonical form")
    return candidates


def stored_plan(body: Mapping[str, Any]) -> Plan:
    """The run's plan from its canonical body."""
    return parse_plan(dict(body))
