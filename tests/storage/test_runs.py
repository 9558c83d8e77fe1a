"""Run lifecycle: queued -> running -> final, idempotent requests, frozen once final."""

from __future__ import annotations

import pytest
from sqlalchemy.orm import Session

from storage.errors import ConflictError, ImmutableRecordError, NotFoundError
from storage.runs import (
    fail_run,
    finish_run,
    get_run,
    queue_run,
    record_progress,
    start_run,
)
from storage.series import save_series_version
from storage.specs import plan_id_of
from tests.storage.builders import ACTOR, benchmark_candidates, monthly_series, small_plan


@pytest.fixture
def versions(session: Session) -> list[int]:
    return [save_series_version(session, monthly_series(key, seed=i), actor=ACTOR).version.id
            for i, key in enumerate(["sales/north", "sales/south"])]


def _queue(session: Session, versions: list[int], **kwargs):
    return queue_run(session, series_version_ids=versions, candidates=benchmark_candidates(),
                     plan=small_plan(), actor=ACTOR, **kwargs)


def test_queued_run_records_the_request(session: Session, versions: list[int]):
    run = _queue(session, versions)

    stored = get_run(session, run.id)
    assert stored == run
    assert stored.status == "queued" and stored.started_at is None
    assert stored.series_version_ids == tuple(versions)
    assert stored.candidate_ids == tuple(c.id for c in benchmark_candidates())
    assert (stored.plan_id, stored.seed) == (plan_id_of(small_plan()), small_plan().seed)
    assert stored.requested_by == ACTOR


def test_lifecycle_moves_from_queued_to_succeeded(session: Session, versions: list[int]):
    run = _queue(session, versions[:1])

    started = start_run(session, run.id, actor="worker-1", folds_total=6,
                        lease_owner="worker-1")
    record_progress(session, run.id, folds_done=4)

    assert (started.status, started.attempts, started.folds_total) == ("running", 1, 6)
    assert get_run(session, run.id).folds_done == 4
    with pytest.raises(ConflictError, match="not stored"):
        finish_run(session, run.id, actor="worker-1", software={"python": "3"})


def test_same_idempotency_key_and_request_returns_the_first_run(session: Session,
                                                                versions: list[int]):
    first = _queue(session, versions, idempotency_key="upload-42")

    again = _queue(session, versions, idempotency_key="upload-42")

    assert again.id == first.id
    with pytest.raises(ConflictError, match="upload-42"):
        _queue(session, versions[:1], idempotency_key="upload-42")


def test_a_failed_run_is_frozen(session: Session, versions: list[int]):
    run = _queue(session, versions)
    failed = fail_run(session, run.id, actor="worker-1", reason="worker lost")

    assert (failed.status, failed.failure_reason) == ("failed", "worker lost")
    assert failed.finished_at is not None
    with pytest.raises(ImmutableRecordError, match="finished"):
        start_run(session, run.id, actor="worker-2")
    with pytest.raises(ImmutableRecordError):
        record_progress(session, run.id, folds_done=1)
    with pytest.raises(ImmutableRecordError):
        fail_run(session, run.id, actor=ACTOR, reason="again", status="cancelled")


def test_starting_a_running_run_again_is_a_conflict(session: Session, versions: list[int]):
    run = _queue(session, versions)
    start_run(session, run.id, actor="worker-1")

    with pytest.raises(ConflictError, match="running, not queued"):
        start_run(session, run.id, actor="worker-2")


def test_a_run_needs_stored_versions(session: Session, versions: list[int]):
    with pytest.raises(NotFoundError, match="series version 999999"):
        _queue(session, [*versions, 999999])
    with pytest.raises(ConflictError, match="twice"):
        _queue(session, [versions[0], versions[0]])
    with pytest.raises(NotFoundError, match="run 999999"):
        get_run(session, 999999)
