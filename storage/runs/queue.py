"""The run queue: claiming runs with a lease, holding it, giving it back, and cancelling.

A worker claims a run that is queued or running under an expired lease, becoming its
``lease_owner`` until ``lease_expires_at``. Claims are fair across requesters (the API
keys' names), not first-in-first-out: the next run is taken from the requester with the
fewest runs running now, then from the one served least recently (whose last run started
longest ago, or never), then the oldest waiting run; a requester already running
``max_running`` runs waits. So the requesters with waiting runs take turns, and one key's
flood holds back another key's run only by the runs in progress. On PostgreSQL the claim
locks the row and skips rows other transactions hold (``FOR UPDATE SKIP LOCKED``), so
workers on several machines take different runs, and claims take the audit log's append
lock first, so each counts the running runs the others just claimed; on SQLite it is one
``UPDATE`` statement, which holds the file's write lock from choosing the run to taking it,
so processes sharing the file cannot both win. Every later write of the worker starts with
:func:`hold_lease`, which renews the lease only if the worker still owns it: a worker that
lost its lease (expired and claimed by another, or the run was cancelled) can write nothing
more, so no unit is stored twice. Because that ``UPDATE`` is the transaction's first
statement, on SQLite it also takes the write lock before any read, which keeps concurrent
writers from failing on a stale snapshot.

Cancellation is recorded in the audit log (``run.cancel_requested``), which is durable and
names who asked, without a column for it: a run whose worker is alive honours it after the
task in progress (one candidate on one series), within seconds; a queued run, or a running
one nobody holds a live lease on, is cancelled at once. Claims of expired leases
(``run.reclaimed``) and leases given back (``run.released``) are audited too; renewals and
progress are operational state and are not.
Lease times come from the clock of the machine writing them, so machines sharing a store
need synchronised clocks (NTP), far closer than the lease length.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta
from typing import Any, cast

from sqlalchemy import CursorResult, Update, and_, case, func, or_, select, update
from sqlalchemy.orm import Session, aliased

from backtest.results import SeriesResult
from storage.audit import canonical_json, lock_audit_log, record_event, run_subject, sha256_text
from storage.db import (
    FINAL_STATUSES,
    AuditEvent,
    CandidateRecord,
    PlanRecord,
    Run,
    RunSeries,
    utc_now,
)
from storage.errors import (
    ImmutableRecordError,
    LeaseLostError,
    NotFoundError,
    translates_errors,
)
from storage.results import write_series_result
from storage.runs.lifecycle import RunInfo, fail_run, get_run, start_run

CANCEL_REQUESTED = "run.cancel_requested"
RECLAIMED = "run.reclaimed"
RELEASED = "run.released"
# A cancel request is looked for among events since its run was queued (occurred_at is
# indexed, the subject is not); the margin covers clock differences between API servers.
CLOCK_SKEW_MARGIN = timedelta(minutes=10)


@dataclass(frozen=True)
class Lease:
    """The right of ``owner`` to work on run ``run_id``, renewed for ``seconds`` at a time."""

    run_id: int
    owner: str
    seconds: float

    def expiry(self) -> datetime:
        """When the lease ends if it is renewed now."""
        return utc_now() + timedelta(seconds=self.seconds)


@dataclass(frozen=True)
class Claim:
    """A claimed run: its lease, and whether an earlier worker's lease expired on it."""

    lease: Lease
    attempts: int
    resumed: bool


@dataclass(frozen=True)
class RunRequest:
    """What a run asked for, as stored: the run, its candidate specs, its plan body and each
    unit's fold count as counted at submission (``None`` for runs queued before counts were
    kept)."""

    run: RunInfo
    candidate_specs: tuple[dict[str, Any], ...]
    plan_body: dict[str, Any]
    unit_folds: tuple[int | None, ...]


@translates_errors
def any_claimable(session: Session) -> bool:
    """Whether a run waits to be claimed: a plain read, so that idle workers lock nothing."""
    return session.scalar(select(Run.id).where(_claimable(Run, utc_now())).limit(1)) is not None


@translates_errors
def claim_run(session: Session, *, owner: str, lease_seconds: float,
              max_running: int | None = None) -> Claim | None:
    """Claim the next claimable run for ``owner``; ``None`` if there is none.

    The next run belongs to the requester with the fewest running runs (live leases), then
    to the one whose last run started longest ago (or never), then is the oldest waiting;
    requesters already running ``max_running`` runs are passed over.
    A queued run is started (``run.started``); a run taken over from an expired lease gets
    one more attempt (``run.reclaimed``). Commit promptly: the row stays locked until then.
    """
    lock_audit_log(session)
    now = utc_now()
    lease_expiry = now + timedelta(seconds=lease_seconds)
    waiting, other, served, chosen = (aliased(Run) for _ in range(4))
    # Each requester with a claimable run, once: a flood of one key's runs costs one group.
    requesters = (select(waiting.requested_by, func.min(waiting.queued_at).label("oldest"))
                  .where(_claimable(waiting, now)).group_by(waiting.requested_by).subquery())
    running = (select(func.count()).select_from(other)
               .where(other.requested_by == requesters.c.requested_by,
                      other.status == "running", other.lease_expires_at > now)
               .scalar_subquery())
    last_served = (select(func.max(served.started_at))
                   .where(served.requested_by == requesters.c.requested_by).scalar_subquery())
    next_requester = select(requesters.c.requested_by)
    if max_running is not None:
        next_requester = next_requester.where(running < max_running)
    next_requester = next_requester.order_by(running, last_served.asc().nulls_first(),
                                             requesters.c.oldest, requesters.c.requested_by)
    fairest = (select(chosen.id)
               .where(chosen.requested_by == next_requester.limit(1).scalar_subquery(),
                      _claimable(chosen, now))
               .order_by(chosen.queued_at, chosen.id).limit(1)
               .with_for_update(skip_locked=True).scalar_subquery())
    taken = session.execute(
        update(Run).where(Run.id == fairest)
        .values(lease_owner=owner, lease_expires_at=lease_expiry)
        .returning(Run.id, Run.status).execution_options(synchronize_session=False)).first()
    if taken is None:
        return None
    lease = Lease(taken.id, owner, lease_seconds)
    if taken.status == "queued":
        run = start_run(session, taken.id, actor=owner, lease_owner=owner,
                        lease_expires_at=lease_expiry)
        return Claim(lease, run.attempts, resumed=False)
    session.execute(update(Run).where(Run.id == taken.id).values(attempts=Run.attempts + 1)
                    .execution_options(synchronize_session=False))
    run = get_run(session, taken.id)
    _audit(session, owner, RECLAIMED, run.id, attempts=run.attempts, lease_owner=owner)
    return Claim(lease, run.attempts, resumed=True)


@translates_errors
def hold_lease(session: Session, lease: Lease, *, folds_done: int | None = None) -> None:
    """Renew ``lease``, raising progress to ``folds_done`` if given and higher.

    Raises :class:`LeaseLostError` if the run is no longer running under this owner. Call
    it first in every transaction that writes for a leased run.
    """
    values: dict[str, Any] = {"lease_expires_at": lease.expiry()}
    if folds_done is not None:
        values["folds_done"] = case((Run.folds_done < folds_done, folds_done),
                                    else_=Run.folds_done)
    renewed = _executed_dml(
        session, update(Run).where(Run.id == lease.run_id, Run.lease_owner == lease.owner,
                          Run.status == "running")
        .values(**values).execution_options(synchronize_session=False))
    if renewed.rowcount != 1:
        raise LeaseLostError(f"{lease.owner} no longer holds the lease of run {lease.run_id}")


@translates_errors
def write_unit(session: Session, lease: Lease, series_version_id: int, result: SeriesResult,
               *, folds_done: int) -> str:
    """Store one series' results if ``lease`` is still held; return the unit's digest."""
    hold_lease(session, lease, folds_done=folds_done)
    return write_series_result(session, lease.run_id, series_version_id, result,
                               actor=lease.owner)


@translates_errors
def release_lease(session: Session, lease: Lease) -> bool:
    """Give the run back so that any worker may claim it now; ``False`` if not held."""
    released = _executed_dml(
        session, update(Run).where(Run.id == lease.run_id, Run.lease_owner == lease.owner,
                          Run.status == "running")
        .values(lease_owner=None, lease_expires_at=None)
        .execution_options(synchronize_session=False))
    if released.rowcount != 1:
        return False
    _audit(session, lease.owner, RELEASED, lease.run_id, lease_owner=None)
    return True


@translates_errors
def request_cancel(session: Session, run_id: int, *, actor: str) -> RunInfo:
    """Ask for a run to be cancelled on behalf of ``actor``; return the run as it now is.

    A queued run, or a running one without a live lease, is cancelled at once. A running
    run whose worker holds a live lease stays running until that worker honours the request
    between units of work. Raises :class:`ImmutableRecordError` if the run is finished.
    """
    if not _lock_unfinished(session, run_id):
        status = get_run(session, run_id).status
        raise ImmutableRecordError(f"run {run_id} is {status}; a finished run cannot be "
                                   "cancelled")
    run = session.get_one(Run, run_id)
    live = run.lease_expires_at is not None and run.lease_expires_at > utc_now()
    if run.status == "running" and live:
        if cancel_requester(session, run_id) is None:
            _audit(session, actor, CANCEL_REQUESTED, run_id, requested_by=actor)
        return get_run(session, run_id)
    return fail_run(session, run_id, actor=actor, status="cancelled",
                    reason=f"cancelled by {actor}")


@translates_errors
def cancel_requester(session: Session, run_id: int) -> str | None:
    """Who asked for a run to be cancelled, if anybody has."""
    queued_at = session.scalar(select(Run.queued_at).where(Run.id == run_id))
    if queued_at is None:
        raise NotFoundError(f"run {run_id} does not exist")
    return session.scalars(
        select(AuditEvent.actor)
        .where(AuditEvent.occurred_at >= queued_at - CLOCK_SKEW_MARGIN,
               AuditEvent.action == CANCEL_REQUESTED, AuditEvent.subject == run_subject(run_id))
        .order_by(AuditEvent.seq).limit(1)).first()


@translates_errors
def run_request(session: Session, run_id: int) -> RunRequest:
    """A run with the stored specs of its candidates (in request order) and its plan body."""
    run = get_run(session, run_id)
    rows = session.execute(select(CandidateRecord.id, CandidateRecord.spec)
                           .where(CandidateRecord.id.in_(run.candidate_ids)))
    specs = dict(rows.tuples().all())
    plan = session.get_one(PlanRecord, run.plan_id)
    folds = session.scalars(select(RunSeries.folds).where(RunSeries.run_id == run_id)
                            .order_by(RunSeries.position))
    return RunRequest(run, tuple(specs[c] for c in run.candidate_ids), plan.body, tuple(folds))


def _lock_unfinished(session: Session, run_id: int) -> bool:
    # A write that changes nothing, so that the row lock (on SQLite the write lock) is taken
    # before anything is read: a read-then-write transaction on SQLite fails at once if
    # another process committed in between.
    locked = _executed_dml(
        session, update(Run).where(Run.id == run_id, Run.status.not_in(FINAL_STATUSES))
        .values(status=Run.status).execution_options(synchronize_session=False))
    return locked.rowcount == 1


def _claimable(run: Any, now: datetime) -> Any:
    lapsed = or_(run.lease_expires_at.is_(None), run.lease_expires_at <= now)
    return or_(run.status == "queued", and_(run.status == "running", lapsed))


def _audit(session: Session, actor: str, action: str, run_id: int, **state: Any) -> None:
    record_event(session, actor=actor, action=action, subject=run_subject(run_id),
                 digest=sha256_text(canonical_json({"run_id": run_id, **state})))


def _executed_dml(session: Session, statement: Update) -> CursorResult[Any]:
    # An UPDATE without RETURNING gives a CursorResult (which has rowcount); Session.execute
    # is typed with the general Result for every kind of statement.
    return cast(CursorResult[Any], session.execute(statement))
