"""Fair use per API key: how much one key may queue, checked when it submits a run.

Two quotas are checked here, inside the submission's transaction:

- ``FOLDLINE_KEY_MAX_QUEUED_RUNS``: runs the key has waiting;
- ``FOLDLINE_KEY_FITS_PER_PERIOD``: the model fits (the submission's estimate, see
  :mod:`backtest.cost`) of the key's runs queued in the last ``FOLDLINE_QUOTA_PERIOD_SECONDS``
  (a sliding window; runs cancelled before they started do not count).

A submission beyond either is answered ``429`` with ``Retry-After``: for the budget, when
enough of the key's earlier runs leave the window; for the queue, the key's typical run time
(a queued run starts about when one of its running runs ends). A single run larger than the
whole budget could never be accepted and is a ``422`` instead. The third quota, runs
computed at once (``FOLDLINE_KEY_MAX_RUNNING_RUNS``), needs no answer: workers pass over a
key's runs while it has that many running (:func:`storage.runs.queue.claim_run`).
"""

from __future__ import annotations

import math
from datetime import timedelta

from sqlalchemy.orm import Session

from backtest.cost import RunCost
from service.errors import FieldError, LimitExceededError, QuotaExceededError
from service.settings import Settings
from storage.db import utc_now
from storage.runs import requester_usage, typical_run_seconds

DEFAULT_WAIT_SECONDS = 30
MAX_WAIT_SECONDS = 3600


def check_quotas(session: Session, requester: str, cost: RunCost, settings: Settings) -> None:
    """Refuse ``requester``'s run of ``cost`` if it would break one of its quotas."""
    budget, period = settings.key_fits_per_period, settings.quota_period_seconds
    if cost.total_fits > budget:
        raise LimitExceededError(
            f"the run would take {cost.total_fits} model fits, more than a key's whole budget "
            f"of {budget} per {period} s (FOLDLINE_KEY_FITS_PER_PERIOD); split it into smaller "
            "runs; nothing was queued", errors=[FieldError("body", "", "too many fits")],
            estimate=cost.to_dict(), limit={"fits_per_period": budget})
    now = utc_now()
    usage = requester_usage(session, requester, since=now - timedelta(seconds=period))
    limits = {"queued_runs": settings.key_max_queued_runs, "fits_per_period": budget,
              "period_seconds": period}
    used = {"queued_runs": usage.queued, "fits_in_period": usage.fits}
    if usage.queued >= settings.key_max_queued_runs:
        typical = typical_run_seconds(session, requester)
        raise QuotaExceededError(
            f"key {requester!r} has {usage.queued} runs waiting, the most a key may have "
            f"(FOLDLINE_KEY_MAX_QUEUED_RUNS = {settings.key_max_queued_runs}); retry when some "
            "have started, or cancel some; nothing was queued",
            retry_after=_seconds(min(DEFAULT_WAIT_SECONDS if typical is None else typical,
                                     MAX_WAIT_SECONDS)),
            usage=used, limit=limits)
    excess = usage.fits + cost.total_fits - budget
    if excess > 0:
        freed, wait = 0, float(period)
        for queued_at, fits in usage.spent:
            freed += fits
            if freed >= excess:
                wait = (queued_at + timedelta(seconds=period) - now).total_seconds()
                break
        raise QuotaExceededError(
            f"key {requester!r} queued runs estimated at {usage.fits} model fits in the last "
            f"{period} s; this run's {cost.total_fits} would pass the budget of {budget} "
            "(FOLDLINE_KEY_FITS_PER_PERIOD); nothing was queued",
            retry_after=_seconds(wait), usage=used, limit=limits)


def _seconds(wait: float) -> int:
    """A ``Retry-After`` value: whole seconds, rounded up, at least 1."""
    return max(1, math.ceil(wait))
