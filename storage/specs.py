"""Candidates and plans, stored once each under their content-derived ids.

A candidate's id is ``"c"`` + the first 16 hex digits of the SHA-256 of its canonical spec
(:attr:`backtest.candidates.Candidate.id`); a plan's id is the full SHA-256 of the canonical
JSON of :meth:`backtest.plan.Plan.canonical`. Registering the same content again is a no-op.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from backtest.candidates import parse_candidate
from backtest.plan import Plan
from storage.audit import (
    as_row,
    candidate_digest,
    candidate_subject,
    canonical_json,
    lock_audit_log,
    plan_digest,
    plan_subject,
    record_event,
    sha256_text,
)
from storage.db import CandidateRecord, PlanRecord, SeriesRecord, utc_now
from storage.errors import ConflictError, translates_errors


def candidate_id_of(spec: Mapping[str, Any]) -> str:
    """The stable id of a canonical candidate spec."""
    return "c" + sha256_text(canonical_json(spec))[:16]


def plan_id_of(plan: Plan) -> str:
    """The id of a plan: SHA-256 of its canonical JSON."""
    return sha256_text(canonical_json(plan.canonical()))


@translates_errors
def register_candidate(session: Session, candidate_id: str, spec: Mapping[str, Any], *,
                       actor: str) -> bool:
    """Store a candidate unless present; return whether it was new.

    Raises :class:`ConflictError` if ``candidate_id`` is not the id of ``spec``.
    """
    if candidate_id_of(spec) != candidate_id:
        raise ConflictError(f"candidate id {candidate_id} does not match its spec "
                            f"{canonical_json(spec)}")
    lock_audit_log(session)
    if session.get(CandidateRecord, candidate_id) is not None:
        return False
    record = CandidateRecord(id=candidate_id, family=str(spec["family"]), spec=dict(spec),
                             created_at=utc_now())
    session.add(record)
    session.flush()
    record_event(session, actor=actor, action="candidate.registered",
                 subject=candidate_subject(candidate_id), digest=candidate_digest([as_row(record)]))
    return True


@translates_errors
def register_plan(session: Session, plan: Plan, *, actor: str) -> str:
    """Store a plan unless present; return its id."""
    plan_id = plan_id_of(plan)
    lock_audit_log(session)
    if session.get(PlanRecord, plan_id) is None:
        record = PlanRecord(id=plan_id, body=plan.canonical(), created_at=utc_now())
        session.add(record)
        session.flush()
        record_event(session, actor=actor, action="plan.registered",
                     subject=plan_subject(plan_id), digest=plan_digest([as_row(record)]))
    return plan_id


@translates_errors
def candidate_label(session: Session, series_key: str, candidate_id: str) -> str | None:
    """The candidate's label at the series' season length; ``None`` if either is unknown."""
    spec = session.scalar(select(CandidateRecord.spec).where(CandidateRecord.id == candidate_id))
    season_length = session.scalar(select(SeriesRecord.season_length)
                                   .where(SeriesRecord.key == series_key))
    if spec is None or season_length is None:
        return None
    return parse_candidate(spec).label(season_length)
