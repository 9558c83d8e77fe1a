"""Computing one claimed run, a unit (one series) at a time, under its lease.

Only the units not yet stored are computed, so a run taken over from a worker that died
resumes where that worker's last committed unit left it; each series' computation is
seeded by the plan, so the stored results equal an uninterrupted run's. The pending series
go through the pool together and each unit is stored as soon as its series is done, while
the pool goes on with the others. A cancel request is noticed as each task (one candidate
on one series) finishes (:mod:`service.worker.cancel`), and looked for once more after each
stored unit; the worker being stopped or the lease lost is noticed as each task finishes.
Leaving the computation early closes the engine's stream, which stops the pool's running
and pending tasks. How a job ends:

- ``succeeded``, ``failed`` (any unexpected error, with a one-line reason) or ``cancelled``;
- ``released``: the worker is stopping; the lease is given back so another worker resumes
  the run at once;
- ``lost``: the lease went to another worker or the run was ended elsewhere; nothing is
  written;
- ``interrupted``: the store could not be reached; the lease runs out and the run is
  claimed again later.
"""

from __future__ import annotations

import logging
import threading
from collections.abc import Callable, Sequence
from contextlib import closing
from typing import Any

from sqlalchemy.orm import Session, sessionmaker

from backtest.candidates import Candidate
from backtest.engine import Progress, planned_fold_count, stream_backtest
from backtest.plan import Plan
from backtest.series import Series
from backtest.software import software_versions
from service.settings import Settings
from service.worker.cancel import CancelWatch
from service.worker.lease import LeaseKeeper
from service.worker.queued_specs import stored_candidates, stored_plan
from storage.db import utc_now
from storage.errors import LeaseLostError, StoreUnavailableError
from storage.results import completed_units
from storage.runs import (
    Lease,
    RunRequest,
    cancel_requester,
    fail_run,
    finish_run,
    hold_lease,
    record_progress,
    release_lease,
    run_request,
    write_unit,
)
from storage.series import load_series

log = logging.getLogger("foldline.worker")
REASON_LENGTH = 1000


class Abandoned(Exception):
    """The worker is stopping before the run is done."""


class CancelRequested(Exception):
    """Someone asked for the run to be cancelled; the message names them."""


class RunJob:
    """One claimed run: compute its pending units, then end it."""

    def __init__(self, sessions: sessionmaker[Session], lease: Lease, settings: Settings,
                 stop: threading.Event) -> None:
        self._sessions, self._lease, self._settings, self._stop = sessions, lease, settings, stop

    def run(self) -> str:
        """Work on the run until it ends or the worker lets go of it; return how it ended."""
        try:
            with LeaseKeeper(self._sessions, self._lease) as keeper, \
                    CancelWatch(self._sessions, self._lease.run_id,
                                self._settings.cancel_poll_seconds) as watch:
                return self._compute(keeper, watch)
        except LeaseLostError as exc:
            log.warning("%s; its new holder carries on", exc)
            return "lost"
        except Abandoned:
            return self._release()
        except StoreUnavailableError as exc:
            log.warning("run %s interrupted: %s", self._lease.run_id, exc)
            return "interrupted"
        except Exception as exc:
            if self._stop.is_set():
                # Stop signals may reach the pool's processes too; that is no failure.
                log.warning("run %s stopped by %s: %s", self._lease.run_id,
                            type(exc).__name__, exc)
                return self._release()
            log.exception("run %s failed", self._lease.run_id)
            return self._fail(exc)

    def _compute(self, keeper: LeaseKeeper, watch: CancelWatch) -> str:
        request = self._transact(run_request, self._lease.run_id)
        candidates = stored_candidates(request.candidate_specs, request.run.candidate_ids)
        plan = stored_plan(request.plan_body)
        series = self._transact(_load_all, request.run.series_version_ids)
        folds = _unit_folds(request, series, candidates, plan)
        done = set(self._transact(completed_units, self._lease.run_id))
        folds_done, folds_total = sum(folds[version] for version in done), sum(folds.values())
        self._transact(self._set_progress, folds_done, folds_total)
        if self._cancelled(keeper):
            return "cancelled"
        pending = [v for v in request.run.series_version_ids if v not in done]
        units = stream_backtest([series[v] for v in pending], candidates, plan,
                                n_jobs=self._settings.worker_jobs,
                                scheduler=self._settings.dask_scheduler,
                                progress=self._progress(keeper, watch, folds_done))
        try:
            with closing(units):
                for position, result in units:
                    folds_done += folds[pending[position]]
                    self._transact(write_unit, self._lease, pending[position], result,
                                   folds_done=folds_done)
                    if self._cancelled(keeper):
                        return "cancelled"
        except CancelRequested as exc:
            self._end(fail_run, status="cancelled", reason=f"cancelled at the request of {exc}")
            return "cancelled"
        self._end(finish_run, software=software_versions(), timing=_timing(request, folds_total))
        return "succeeded"

    def _cancelled(self, keeper: LeaseKeeper) -> bool:
        self._check(keeper)
        requester = self._transact(cancel_requester, self._lease.run_id)
        if requester is None:
            return False
        self._end(fail_run, status="cancelled",
                  reason=f"cancelled at the request of {requester}")
        return True

    def _progress(self, keeper: LeaseKeeper, watch: CancelWatch,
                  folds_before: int) -> Progress:
        def report(done: int, _total: int) -> None:
            keeper.folds_done = folds_before + done
            self._check(keeper)
            if watch.requested.is_set():
                raise CancelRequested(watch.requester)
        return report

    def _check(self, keeper: LeaseKeeper) -> None:
        if self._stop.is_set():
            raise Abandoned
        if keeper.lost.is_set():
            raise LeaseLostError(f"{self._lease.owner} lost the lease of run "
                                 f"{self._lease.run_id}")

    def _release(self) -> str:
        self._transact(release_lease, self._lease)
        return "released"

    def _fail(self, exc: Exception) -> str:
        reason = f"{type(exc).__name__}: {' '.join(str(exc).split())}"[:REASON_LENGTH]
        try:
            self._end(fail_run, reason=reason)
        except Exception:
            log.exception("run %s could not be marked failed", self._lease.run_id)
            return "interrupted"
        return "failed"

    def _set_progress(self, session: Session, folds_done: int, folds_total: int) -> None:
        hold_lease(session, self._lease)
        record_progress(session, self._lease.run_id, folds_done=folds_done,
                        folds_total=folds_total)

    def _end(self, change: Callable[..., Any], **values: Any) -> None:
        with self._sessions.begin() as session:
            hold_lease(session, self._lease)
            change(session, self._lease.run_id, actor=self._lease.owner, **values)

    def _transact(self, step: Callable[..., Any], *args: Any, **values: Any) -> Any:
        with self._sessions.begin() as session:
            return step(session, *args, **values)


def _unit_folds(request: RunRequest, series: dict[int, Series],
                candidates: Sequence[Candidate], plan: Plan) -> dict[int, int]:
    """Each unit's folds as counted at submission; counted here only for runs queued before
    the counts were stored."""
    counted = dict(zip(request.run.series_version_ids, request.unit_folds))
    return {version: known if (known := counted[version]) is not None
            else planned_fold_count([one], candidates, plan) for version, one in series.items()}


def _load_all(session: Session, versions: Sequence[int]) -> dict[int, Series]:
    return {version: load_series(session, version) for version in versions}


def _timing(request: RunRequest, folds: int) -> dict[str, float]:
    started = request.run.started_at or utc_now()
    return {"seconds": (utc_now() - started).total_seconds(), "folds": float(folds)}
