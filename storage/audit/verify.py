"""Verifying the audit log: the hash chain, the content it vouches for, and its coverage.

:func:`verify_audit_log` walks the events in order and reports the first problem:

- a gap in the sequence, or an event whose ``prev_hash`` is not its predecessor's hash
  (an event was removed or inserted);
- an event whose hash does not match its own fields (an event was altered);
- an event whose subject's content, re-digested from the rows now stored, differs from the
  digest it recorded (the content was altered behind the API's back);
- after the walk, a stored record that no event vouches for (content added behind its back).

Removing events from the *end* of the log leaves a valid shorter chain; to detect that,
keep the reported ``head_hash`` somewhere else and compare it on the next audit.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Any

from sqlalchemy import Row, Select, select
from sqlalchemy.orm import Session

from storage.audit.contents import (
    candidate_subject,
    champion_subject,
    issued_subject,
    key_subject,
    outcomes_subject,
    plan_subject,
    run_subject,
    series_subject,
    stored_digest,
    unit_subject,
    version_subject,
)
from storage.audit.log import GENESIS_HASH, event_hash
from storage.db import (
    FINAL_STATUSES,
    ApiKey,
    ApiKeyRevocation,
    AuditEvent,
    CandidateRecord,
    ChampionChoiceRecord,
    IssuedForecastRecord,
    OutcomeSetRecord,
    PlanRecord,
    Run,
    SeriesRecord,
    SeriesResultRecord,
    SeriesVersion,
)
from storage.errors import translates_errors

_PAGE = 1000


@dataclass(frozen=True)
class AuditReport:
    """Outcome of an audit: events checked, and the first problem found (if any)."""

    events_checked: int
    head_hash: str
    broken_at: int | None = None
    problem: str | None = None

    @property
    def ok(self) -> bool:
        return self.problem is None


@translates_errors
def verify_audit_log(session: Session) -> AuditReport:
    """Check the whole log and the stored content; stop at the first problem."""
    previous, checked = GENESIS_HASH, 0
    recorded: set[tuple[str, str]] = set()
    for event in _events(session):
        problem = _check(session, event, previous, checked + 1)
        if problem is not None:
            return AuditReport(checked, previous, event.seq, problem)
        recorded.add((event.action, event.subject))
        previous, checked = event.hash, checked + 1
    unrecorded = _first_unrecorded(session, recorded)
    return AuditReport(checked, previous, None, unrecorded)


def _events(session: Session) -> Iterator[Row[Any]]:
    table, last = AuditEvent.__table__, 0
    while True:
        page = session.execute(select(table).where(table.c.seq > last)
                               .order_by(table.c.seq).limit(_PAGE)).all()
        yield from page
        if len(page) < _PAGE:
            return
        last = page[-1].seq


def _check(session: Session, event: Row[Any], previous: str, expected_seq: int) -> str | None:
    if event.seq != expected_seq:
        return f"event {expected_seq} is missing; the next stored event is {event.seq}"
    if event.prev_hash != previous:
        return f"event {event.seq} does not follow event {event.seq - 1}: the chain is broken"
    fields = (event.seq, event.occurred_at, event.actor, event.action, event.subject,
              event.digest, event.prev_hash)
    if event_hash(*fields) != event.hash:
        return f"event {event.seq} was altered: its hash does not match its fields"
    digest = stored_digest(session, event.action, event.subject)
    if digest is not None and digest != event.digest:
        return (f"the stored content of {event.subject} differs from what event {event.seq} "
                f"({event.action}) recorded")
    return None


def _first_unrecorded(session: Session, recorded: set[tuple[str, str]]) -> str | None:
    expected: list[tuple[str, Select[Any], Callable[..., str]]] = [
        ("series.created", select(SeriesRecord.id), series_subject),
        ("series_version.created", select(SeriesVersion.id), version_subject),
        ("candidate.registered", select(CandidateRecord.id), candidate_subject),
        ("plan.registered", select(PlanRecord.id), plan_subject),
        ("run.queued", select(Run.id), run_subject),
        ("run.finished", select(Run.id).where(Run.status.in_(FINAL_STATUSES)), run_subject),
        ("results.written",
         select(SeriesResultRecord.run_id, SeriesResultRecord.series_version_id),
         unit_subject),
        ("champion.chosen", select(ChampionChoiceRecord.id), champion_subject),
        ("forecast.issued", select(IssuedForecastRecord.id), issued_subject),
        ("api_key.created", select(ApiKey.id), key_subject),
        ("api_key.revoked", select(ApiKeyRevocation.key_id), key_subject),
        ("outcomes.recorded",
         select(OutcomeSetRecord.forecast_id, OutcomeSetRecord.series_version_id),
         outcomes_subject),
    ]
    for action, query, subject_of in expected:
        for key in session.execute(query):
            subject = subject_of(*key)
            if (action, subject) not in recorded:
                return f"{subject} is stored but no {action} event vouches for it"
    return None
