"""A bounded fuzz run over the OpenAPI document: no 5xx, and nothing stored by a rejection.

schemathesis generates requests for every operation of the app's own ``/openapi.json``,
valid ones (positive) and invalid ones (negative), each sent with the key of a role drawn
from every role and none. The app runs in-process on a real SQLite store holding a series
with a finished run. The run is bounded: a fixed seed, a few examples per operation first
(every operation is reached, whatever the budget), then more while the time budget lasts
(``FOLDLINE_FUZZ_SECONDS``, 45 s by default, so the run stays under 60 s in CI). It fails on any 5xx
and on any request answered 4xx after which the store differs from before it (row counts
of every audited table and the run rows, which are the only rows that may change).
"""

from __future__ import annotations

import hashlib
import os
import time
from collections import Counter
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import httpx2 as httpx
import pytest
import schemathesis
from hypothesis import HealthCheck, Phase, given, seed, settings
from hypothesis import strategies as st
from schemathesis import GenerationMode
from sqlalchemy import func, select, text

from storage.db import ROLES, Base
from tests.service.conftest import Api, copied_store, serving
from tests.storage.builders import monthly_series

SEED = 19
BUDGET_SECONDS = float(os.environ.get("FOLDLINE_FUZZ_SECONDS", "45"))
FIRST_PASS, LATER_PASS = 3, 12
#: operational state a request may write without storing anything audited
NOT_CONTENT = {"audit_verification", "page_sign_out"}
CALLERS: tuple[str | None, ...] = (*ROLES, None)


@dataclass
class Tally:
    """What the fuzz run sent and what went wrong."""

    deadline: float
    sent: int = 0
    unsendable: int = 0
    by_role: Counter[str] = field(default_factory=Counter)
    by_status: Counter[int] = field(default_factory=Counter)
    operations: set[str] = field(default_factory=set)
    server_errors: list[str] = field(default_factory=list)
    side_effects: list[str] = field(default_factory=list)


@pytest.fixture(scope="module")
def fuzzed(sqlite_template: Path, tmp_path_factory: pytest.TempPathFactory) -> Iterator[Api]:
    with serving(copied_store(sqlite_template, tmp_path_factory.mktemp("fuzz"))) as api:
        assert api.post_series(monthly_series("a", seed=3)).status_code == 201
        api.complete(api.submit(["a"]).json()["id"])
        yield api


def store_digest(api: Api) -> str:
    """Row counts of every content table and the run rows (the one table rows change in)."""
    parts = []
    with api.sessions.begin() as session:
        for table in Base.metadata.sorted_tables:
            if table.name not in NOT_CONTENT:
                parts.append(f"{table.name}:{session.scalar(select(func.count()).select_from(table))}")
        parts.extend(map(repr, session.execute(text("SELECT * FROM run ORDER BY id"))))
    return hashlib.sha256("\n".join(parts).encode()).hexdigest()


def _send(api: Api, kwargs: dict[str, Any], role: str | None) -> httpx.Response:
    headers = {k: v for k, v in kwargs.get("headers", {}).items()
               if k.lower() not in ("authorization", "user-agent", "connection",
                                    "accept-encoding")}
    if role is not None:
        headers["Authorization"] = f"Bearer {api.tokens[role]}"
    if kwargs.get("cookies"):
        headers["Cookie"] = "; ".join(f"{k}={v}" for k, v in kwargs["cookies"].items())
    body = {}
    if "json" in kwargs:
        body["json"] = kwargs["json"]
    elif kwargs.get("data") is not None:
        data = kwargs["data"]
        body["content"] = data if isinstance(data, bytes | str) else None
        if body["content"] is None:
            body = {"data": data}
    if kwargs.get("files"):
        body["files"] = kwargs["files"]
    url = kwargs["url"].removeprefix("http://testserver")
    return api.client.request(kwargs["method"], url, headers=headers,
                              params=kwargs.get("params"), follow_redirects=False, **body)


def _fuzz(api: Api, operation: Any, examples: int, tally: Tally, bounded: bool) -> None:
    cases = st.one_of(operation.as_strategy(GenerationMode.POSITIVE),
                      operation.as_strategy(GenerationMode.NEGATIVE))

    @seed(SEED)
    @settings(max_examples=examples, database=None, deadline=None,
              phases=[Phase.generate], suppress_health_check=list(HealthCheck))
    @given(case=cases, role=st.sampled_from(CALLERS))
    def one(case: Any, role: str | None) -> None:
        if bounded and time.monotonic() > tally.deadline:
            return
        label = f"{case.method} {case.path}"
        kwargs = case.as_transport_kwargs(base_url="http://testserver")
        before = store_digest(api)
        try:
            response = _send(api, kwargs, role)
        except (httpx.HTTPError, UnicodeError, ValueError, TypeError):
            tally.unsendable += 1  # the client refuses it (e.g. a header that is not text)
            return
        tally.sent += 1
        tally.by_role[role or "anonymous"] += 1
        tally.by_status[response.status_code] += 1
        tally.operations.add(label)
        if response.status_code >= 500:
            tally.server_errors.append(f"{label} as {role}: {response.status_code} "
                                       f"{response.text[:300]} ({kwargs['url']})")
        elif response.status_code >= 400 and store_digest(api) != before:
            tally.side_effects.append(f"{label} as {role}: {response.status_code} stored "
                                      f"something ({kwargs['url']})")

    one()


def test_fuzzing_the_openapi_document_finds_no_5xx_and_no_stored_rejection(fuzzed: Api):
    schema = schemathesis.openapi.from_asgi("/openapi.json", fuzzed.app)
    operations = [result.ok() for result in schema.get_all_operations()]
    started = time.monotonic()
    tally = Tally(deadline=started + BUDGET_SECONDS)
    for operation in operations:  # every operation first, whatever the budget
        _fuzz(fuzzed, operation, FIRST_PASS, tally, bounded=False)
    for operation in operations:
        if time.monotonic() > tally.deadline:
            break
        _fuzz(fuzzed, operation, LATER_PASS, tally, bounded=True)
    seconds = time.monotonic() - started
    print(f"\nfuzzed {tally.sent} requests over {len(tally.operations)} of {len(operations)} "
          f"operations in {seconds:.1f} s (seed {SEED}); {tally.unsendable} not sendable; "
          f"5xx: {len(tally.server_errors)}; stored by a rejection: {len(tally.side_effects)}; "
          f"by role {dict(tally.by_role)}; by status {dict(sorted(tally.by_status.items()))}")

    assert not tally.server_errors, "\n".join(tally.server_errors[:20])
    assert not tally.side_effects, "\n".join(tally.side_effects[:20])
    assert set(tally.by_role) == {r or "anonymous" for r in CALLERS}
    assert len(tally.operations) == len(operations)  # the first pass reached every one
    assert any(400 <= s < 500 for s in tally.by_status) and any(s < 300 for s in tally.by_status)
