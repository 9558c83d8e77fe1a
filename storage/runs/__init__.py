"""Runs: queueing a request (one idempotency rule), its lifecycle queued -> running -> final,
the queue's claims and leases, and finding runs.
"""

from storage.runs.index import (
    RunFilter,
    list_runs,
    run_candidate_labels,
    run_versions,
    runs_using_version,
)
from storage.runs.lifecycle import (
    RunInfo,
    fail_run,
    finish_run,
    get_run,
    queue_run,
    record_progress,
    start_run,
)
from storage.runs.queue import (
    Lease,
    RunRequest,
    any_claimable,
    cancel_requester,
    claim_run,
    hold_lease,
    release_lease,
    request_cancel,
    run_request,
    write_unit,
)

__all__ = [
    "Lease",
    "RunFilter",
    "RunInfo",
    "RunRequest",
    "any_claimable",
    "cancel_requester",
    "claim_run",
    "fail_run",
    "finish_run",
    "get_run",
    "hold_lease",
    "list_runs",
    "queue_run",
    "record_progress",
    "release_lease",
    "request_cancel",
    "run_candidate_labels",
    "run_request",
    "run_versions",
    "runs_using_version",
    "start_run",
    "write_unit",
]
