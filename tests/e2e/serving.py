"""A real ``foldline serve`` on loopback for end-to-end tests: keys made with the CLI, HTTP
clients that carry them, and waiting for a run to end."""

from __future__ import annotations

import os
import subprocess
import sys
import time
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from pathlib import Path

import httpx

from service.demo.run import _free_port, running_server
from tests.storage.conftest import migrated_store


def cli(env: dict[str, str], *args: str) -> str:
    """Run ``foldline ARGS`` with ``env``; its standard output (it must succeed)."""
    done = subprocess.run([sys.executable, "-m", "service.cli.main", *args], env=env,
                          capture_output=True, text=True, timeout=240)
    assert done.returncode == 0, done.stderr
    return done.stdout


@contextmanager
def served(backend: str, tmp_path: Path, roles: Sequence[str]
           ) -> Iterator[tuple[str, dict[str, str]]]:
    """A server with its embedded worker on a migrated store of ``backend``: its base URL
    and a bearer token for each of ``roles``."""
    with served_store(backend, tmp_path, roles) as (base, tokens, _url):
        yield base, tokens


@contextmanager
def served_store(backend: str, tmp_path: Path, roles: Sequence[str], **settings: str
                 ) -> Iterator[tuple[str, dict[str, str], str]]:
    """:func:`served`, with the store's URL too; ``settings`` are extra ``FOLDLINE_*``
    variables by lower-case name."""
    with migrated_store(backend, tmp_path) as url:
        env = {**os.environ, "FOLDLINE_DATABASE_URL": url, "FOLDLINE_HOST": "127.0.0.1",
               "FOLDLINE_PORT": str(_free_port()), "FOLDLINE_WORKER_JOBS": "1",
               "FOLDLINE_POLL_SECONDS": "0.2", "FOLDLINE_LEASE_SECONDS": "20",
               **{f"FOLDLINE_{name.upper()}": value for name, value in settings.items()}}
        tokens = {role: cli(env, "keys", "create", "--role", role, "--name", f"e2e-{role}")
                  .splitlines()[0] for role in roles}
        with running_server(env, tmp_path / "server.log", timeout=300) as base:
            yield base, tokens, url


def bearer_client(base: str, token: str) -> httpx.Client:
    """An HTTP client that sends ``token`` as its bearer key."""
    return httpx.Client(base_url=base, headers={"Authorization": f"Bearer {token}"},
                        timeout=30)


def wait_for_run(client: httpx.Client, location: str, timeout: float = 180.0) -> dict:
    """The run at ``location`` once it has ended."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        run = client.get(location).json()
        if run["status"] in ("succeeded", "failed", "cancelled"):
            return run
        time.sleep(0.3)
    raise AssertionError(f"run at {location} did not finish within {timeout} s")
