"""API writes beside a busy SQLite writer (a worker storing results) do not fail."""

from __future__ import annotations

import threading

from storage.audit import record_event
from tests.service.conftest import Api
from tests.storage.builders import monthly_series


def test_posts_succeed_while_another_connection_keeps_writing(api: Api):
    stop, failures = threading.Event(), []

    def worker_like_writer() -> None:
        while not stop.is_set():
            try:
                with api.sessions.begin() as session:
                    record_event(session, actor="worker", action="test.write", subject="x",
                                 digest="0" * 64)
            except Exception as exc:  # the writer's own collisions are not under test
                failures.append(exc)
            stop.wait(0.002)

    writer = threading.Thread(target=worker_like_writer)
    writer.start()
    try:
        statuses = [api.post_series(monthly_series(f"s{i}", n=24)).status_code
                    for i in range(30)]
    finally:
        stop.set()
        writer.join()

    assert statuses == [201] * 30
    assert len(api.get("reader", "/v1/series?limit=100").json()["items"]) == 30
