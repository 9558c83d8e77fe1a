"""Answers that say what happened, through a real ``foldline serve`` on loopback, on SQLite
and PostgreSQL: bad input is a 422 naming it, a store that drops the connection is a 503
to retry, never a 500."""

from __future__ import annotations

import threading
import time
from collections.abc import Iterator

import httpx
import pytest
from sqlalchemy import create_engine, text

from tests.e2e.serving import bearer_client, served_store
from tests.service.conftest import series_body
from tests.storage.builders import monthly_series
from tests.storage.conftest import BACKENDS

ROLES = ("reader", "submitter", "auditor", "admin")


@pytest.fixture(scope="module", params=BACKENDS)
def server(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory
           ) -> Iterator[tuple[str, str, dict[str, httpx.Client]]]:
    """The backend, the store URL and a client per role of one running server."""
    directory = tmp_path_factory.mktemp(f"hostile-{request.param}")
    with served_store(request.param, directory, ROLES) as (base, tokens, url):
        clients = {role: bearer_client(base, token) for role, token in tokens.items()}
        yield request.param, url, clients
        for client in clients.values():
            client.close()


def test_an_empty_candidate_id_on_a_series_without_champion_is_422(server):
    _, _, clients = server
    clients["submitter"].post("/v1/series", json=series_body(monthly_series("plain", n=24)))

    response = clients["reader"].get("/v1/series/plain/monitoring", params={"candidate_id": ""})

    assert response.status_code == 422
    assert response.json()["errors"][0]["pointer"] == "/candidate_id"


def test_a_thousand_tag_filters_are_422_too_many_filters(server):
    _, _, clients = server
    query = "&".join(f"tag=t{i}:v" for i in range(1000))

    response = clients["reader"].get(f"/v1/series?{query}")

    assert response.status_code == 422
    assert "too many tag filters" in response.json()["detail"]
    assert response.json()["errors"][0]["pointer"] == "/tag"


def test_a_connection_dropped_during_authentication_is_503(server):
    backend, url, clients = server
    if backend != "postgresql":
        pytest.skip("PostgreSQL drops connections; SQLite has none to drop")
    admin = create_engine(url, isolation_level="AUTOCOMMIT")
    answers: list[httpx.Response] = []
    with admin.connect() as blocker:
        # Hold the key table so the server's authentication query waits, then end the
        # server's connection while it waits.
        blocker.execute(text("BEGIN"))
        blocker.execute(text("LOCK TABLE api_key IN ACCESS EXCLUSIVE MODE"))
        asking = threading.Thread(target=lambda: answers.append(
            clients["reader"].get("/v1/series")))
        asking.start()
        killed = _terminate_waiting_backend(blocker)
        blocker.execute(text("ROLLBACK"))
        asking.join(30)
    admin.dispose()

    assert killed
    assert answers[0].status_code == 503
    assert answers[0].headers["Retry-After"]
    assert clients["reader"].get("/v1/series").status_code == 200  # the next one reconnects


def _terminate_waiting_backend(blocker) -> bool:
    deadline = time.monotonic() + 15
    while time.monotonic() < deadline:
        killed = blocker.execute(text(
            "SELECT pg_terminate_backend(pid) FROM pg_stat_activity WHERE datname = "
            "current_database() AND wait_event_type = 'Lock' AND pid <> pg_backend_pid()"
        )).scalars().all()
        if killed:
            return all(killed)
        time.sleep(0.05)
    return False
