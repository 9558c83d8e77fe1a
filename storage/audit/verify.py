"""Verifying the audit log: the hash chain, the content it vouches for, and its coverage.

One walk serves two passes:

- :func:`verify_audit_log`, the full pass (``foldline audit verify``, for the auditor):
  every event from the first, and every stored record;
- :func:`verify_incrementally`, the routine pass (the API): it continues from the last
  verified head (:class:`~storage.db.schema.AuditVerification`, written by
  :func:`record_verified`) and reads only what came after it.

The walk reports the first problem:

- a gap in the sequence, or an event whose ``prev_hash`` is not its predecessor's hash
  (an event was removed or inserted);
- an event whose hash is neither the plain nor, under the session's audit key, the keyed
  hash of its fields (an event was altered), or a plain event after a keyed one (the
  chain was rewritten without the key; see :mod:`storage.audit.log`);
- an event whose subject's content, re-digested from the rows now stored, differs from the
  digest it recorded (the content was altered behind the API's back);
- after the walk, a stored record that no event vouches for (content added behind its back).

Memory stays bounded whatever the store's size: events are read in pages, and records are
streamed in pages and looked up in the log by its (subject, action) index.

The incremental pass trusts the last verified head only if its MAC matches under the
session's audit key (without a key: only if it has no MAC); otherwise it makes a full pass.
It checks that the store still holds that head (else the log up to it was rewritten or cut
back), walks the later events, and looks for unvouched records among those stamped since
that verification began, less :data:`COVERAGE_OVERLAP` (a write is stamped before it
commits). It does not re-digest the content of earlier events, nor see records inserted
with back-dated stamps: that is the full pass's work. Removing events from the *end* of the
log leaves a valid shorter chain; a signed checkpoint kept elsewhere
(:mod:`storage.audit.checkpoint`) catches that.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from datetime import datetime, timedelta
from typing import Any, Literal

from sqlalchemy import Row, Select, func, or_, select
from sqlalchemy.orm import Session

from storage.audit.checkpoint import head_mac
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
from storage.audit.log import GENESIS_HASH, audit_key_of, event_hash
from storage.db import (
    FINAL_STATUSES,
    ApiKey,
    ApiKeyRevocation,
    AuditEvent,
    AuditVerification,
    CandidateRecord,
    ChampionChoiceRecord,
    IssuedForecastRecord,
    OutcomeSetRecord,
    PlanRecord,
    Run,
    SeriesRecord,
    SeriesResultRecord,
    SeriesVersion,
    utc_now,
)
from storage.errors import translates_errors

_PAGE = 1000
_VERIFY_LOCK = 0x466F6C65
#: how far before the last verification's start the incremental pass looks for records:
#: longer than any write transaction (and any clock difference between writers)
COVERAGE_OVERLAP = timedelta(minutes=10)
Mode = Literal["full", "incremental"]


@dataclass(frozen=True)
class VerifiedHead:
    """Where a verification starts: the last verified event and when that check began."""

    seq: int
    hash: str
    keyed_from: int | None
    started_at: datetime | None


LOG_START = VerifiedHead(0, GENESIS_HASH, None, None)


@dataclass(frozen=True)
class AuditReport:
    """Outcome of an audit: events checked, the head reached, the first problem (if any).

    ``from_seq`` is the verified event the walk continued from (0: the start of the log);
    ``keyed_from`` the first event with a keyed hash, if any.
    """

    events_checked: int
    head_hash: str
    broken_at: int | None = None
    problem: str | None = None
    head_seq: int = 0
    keyed_from: int | None = None
    from_seq: int = 0
    mode: Mode = "full"
    started_at: datetime | None = None

    @property
    def ok(self) -> bool:
        return self.problem is None


@translates_errors
def verify_audit_log(session: Session) -> AuditReport:
    """Check the whole log and every stored record; stop at the first problem."""
    return _walk(session, LOG_START, "full", utc_now(), COVERAGE_OVERLAP)


@translates_errors
def verify_incrementally(session: Session,
                         overlap: timedelta = COVERAGE_OVERLAP) -> AuditReport:
    """Check what came after the last trusted verified head (a full pass if there is none);
    look for unvouched records stamped since that verification began, less ``overlap``.

    On PostgreSQL a transaction-level advisory lock lets one verification run at a time.
    """
    started_at = utc_now()
    if session.get_bind().dialect.name == "postgresql":
        session.execute(select(func.pg_advisory_xact_lock(_VERIFY_LOCK)))
    start = _trusted_head(session)
    if start is None:
        return _walk(session, LOG_START, "full", started_at, overlap)
    stored = session.scalar(select(AuditEvent.hash).where(AuditEvent.seq == start.seq))
    if start.seq > 0 and stored != start.hash:
        what = "is gone: the log was cut back" if stored is None else "was rewritten"
        return AuditReport(0, start.hash, start.seq,
                           f"event {start.seq}, verified before, {what}", start.seq,
                           start.keyed_from, start.seq, "incremental", started_at)
    return _walk(session, start, "incremental", started_at, overlap)


@translates_errors
def record_verified(session: Session, report: AuditReport) -> bool:
    """Keep a passed report's head for the next incremental pass (MAC'd under the session's
    audit key); ``False`` if it passed nothing new (no event after where it started)."""
    if not report.ok or report.started_at is None:
        raise ValueError("only a passed verification has a head to keep")
    if report.mode == "incremental" and report.head_seq == report.from_seq:
        return False
    key = audit_key_of(session)
    head = VerifiedHead(report.head_seq, report.head_hash, report.keyed_from,
                        report.started_at)
    session.add(AuditVerification(
        seq=head.seq, hash=head.hash, keyed_from=head.keyed_from, started_at=head.started_at,
        finished_at=utc_now(), mode=report.mode, events_checked=report.events_checked,
        mac=None if key is None else _head_mac(key, head)))
    session.flush()
    return True


def _head_mac(key: bytes, head: VerifiedHead) -> str:
    assert head.started_at is not None
    return head_mac(key, head.seq, head.hash, head.keyed_from, head.started_at.isoformat())


def _trusted_head(session: Session) -> VerifiedHead | None:
    row = session.scalars(select(AuditVerification)
                          .order_by(AuditVerification.id.desc()).limit(1)).first()
    if row is None:
        return None
    head = VerifiedHead(row.seq, row.hash, row.keyed_from, row.started_at)
    key = audit_key_of(session)
    if key is None:
        return head if row.mac is None else None
    return head if row.mac == _head_mac(key, head) else None


def _walk(session: Session, start: VerifiedHead, mode: Mode, started_at: datetime,
          overlap: timedelta) -> AuditReport:
    key = audit_key_of(session)
    previous, seq, keyed_from, checked = start.hash, start.seq, start.keyed_from, 0
    for event in _events(session, after=start.seq):
        problem, keyed = _check(session, event, previous, seq + 1, key, keyed_from)
        if problem is not None:
            return AuditReport(checked, previous, event.seq, problem, seq, keyed_from,
                               start.seq, mode, started_at)
        if keyed and keyed_from is None:
            keyed_from = event.seq
        previous, seq, checked = event.hash, event.seq, checked + 1
    since = None if start.started_at is None else start.started_at - overlap
    unrecorded = _first_unrecorded(session, since)
    return AuditReport(checked, previous, None, unrecorded, seq, keyed_from, start.seq, mode,
                       started_at)


def _events(session: Session, after: int) -> Iterator[Row[Any]]:
    table, last = AuditEvent.__table__, after
    while True:
        page = session.execute(select(table).where(table.c.seq > last)
                               .order_by(table.c.seq).limit(_PAGE)).all()
        yield from page
        if len(page) < _PAGE:
            return
        last = page[-1].seq


def _check(session: Session, event: Row[Any], previous: str, expected_seq: int,
           key: bytes | None, keyed_from: int | None) -> tuple[str | None, bool]:
    """The event's problem (or ``None``) and whether its hash is keyed."""
    if event.seq != expected_seq:
        return f"event {expected_seq} is missing; the next stored event is {event.seq}", False
    if event.prev_hash != previous:
        return (f"event {event.seq} does not follow event {event.seq - 1}: the chain is "
                "broken"), False
    fields = (event.seq, event.occurred_at, event.actor, event.action, event.subject,
              event.digest, event.prev_hash)
    if event_hash(*fields) == event.hash:
        if keyed_from is not None:
            return (f"event {event.seq} has a plain hash after keyed event {keyed_from}: it "
                    "was rewritten without the audit key"), False
        keyed = False
    elif key is not None and event_hash(*fields, key=key) == event.hash:
        keyed = True
    elif key is None:
        return (f"event {event.seq} was altered, or is keyed and needs FOLDLINE_AUDIT_KEY: "
                "its hash does not match its fields"), False
    else:
        return f"event {event.seq} was altered: its hash does not match its fields", False
    digest = stored_digest(session, event.action, event.subject)
    if digest is not None and digest != event.digest:
        return (f"the stored content of {event.subject} differs from what event {event.seq} "
                f"({event.action}) recorded"), keyed
    return None, keyed


def _first_unrecorded(session: Session, since: datetime | None) -> str | None:
    for action, query, subject_of in _vouched_records(since):
        rows = session.execute(query.execution_options(yield_per=_PAGE))
        for page in rows.partitions():
            subjects = [subject_of(*row) for row in page]
            vouched = set(session.scalars(select(AuditEvent.subject).where(
                AuditEvent.action == action, AuditEvent.subject.in_(subjects))))
            missing = next((s for s in subjects if s not in vouched), None)
            if missing is not None:
                rows.close()
                return f"{missing} is stored but no {action} event vouches for it"
    return None


def _vouched_records(since: datetime | None
                     ) -> list[tuple[str, Select[Any], Callable[..., str]]]:
    """Each audited kind of record: its action, the keys of its records stamped since
    ``since`` (all if ``None``), and its subject name."""
    def stamped(query: Select[Any], stamp: Any) -> Select[Any]:
        return query if since is None else query.where(stamp >= since)

    units = select(SeriesResultRecord.run_id, SeriesResultRecord.series_version_id)
    if since is not None:  # a unit is written while its run is open
        units = units.where(SeriesResultRecord.run_id.in_(select(Run.id).where(
            or_(Run.finished_at >= since, Run.status.not_in(FINAL_STATUSES)))))
    return [
        ("series.created", stamped(select(SeriesRecord.id), SeriesRecord.created_at),
         series_subject),
        ("series_version.created", stamped(select(SeriesVersion.id), SeriesVersion.created_at),
         version_subject),
        ("candidate.registered",
         stamped(select(CandidateRecord.id), CandidateRecord.created_at), candidate_subject),
        ("plan.registered", stamped(select(PlanRecord.id), PlanRecord.created_at),
         plan_subject),
        ("run.queued", stamped(select(Run.id), Run.queued_at), run_subject),
        ("run.finished",
         stamped(select(Run.id).where(Run.status.in_(FINAL_STATUSES)), Run.finished_at),
         run_subject),
        ("results.written", units, unit_subject),
        ("champion.chosen",
         stamped(select(ChampionChoiceRecord.id), ChampionChoiceRecord.chosen_at),
         champion_subject),
        ("forecast.issued",
         stamped(select(IssuedForecastRecord.id), IssuedForecastRecord.issued_at),
         issued_subject),
        ("api_key.created", stamped(select(ApiKey.id), ApiKey.created_at), key_subject),
        ("api_key.revoked",
         stamped(select(ApiKeyRevocation.key_id), ApiKeyRevocation.revoked_at), key_subject),
        ("outcomes.recorded",
         stamped(select(OutcomeSetRecord.forecast_id, OutcomeSetRecord.series_version_id),
                 OutcomeSetRecord.scored_at), outcomes_subject),
    ]
