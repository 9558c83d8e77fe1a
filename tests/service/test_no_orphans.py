"""No orphans: a worker's pool processes end with it, whether it is killed with SIGKILL
or a ``foldline serve`` is stopped with SIGTERM."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

from service.demo.run import _free_port
from storage.runs import get_run
from tests.service.worker_helpers import (
    FAST,
    REPO,
    queue,
    sessions_on,
    some_series,
    wait_until,
    workers,
)
from tests.storage.conftest import migrated_store

SURVIVAL_SECONDS = 5.0


def _children(pid: int) -> set[int]:
    found = set()
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                stat = (entry / "stat").read_text()
            except OSError:
                continue
            if int(stat.rsplit(")", 1)[1].split()[1]) == pid:
                found.add(int(entry.name))
    return found


def _alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state not in ("Z", "X")


def _survivors(pids: set[int]) -> set[int]:
    deadline = time.monotonic() + SURVIVAL_SECONDS
    while time.monotonic() < deadline:
        left = {pid for pid in pids if _alive(pid)}
        if not left:
            return left
        time.sleep(0.1)
    return {pid for pid in pids if _alive(pid)}


def _run_to_the_end(url: str, log: Path) -> None:
    with sessions_on(url) as sessions:
        run_id = queue(sessions, some_series(2), FAST)

        def status() -> str:
            with sessions.begin() as session:
                return get_run(session, run_id).status

        wait_until(lambda: status() == "succeeded", "the run to finish", timeout=240, log=log)


def test_a_worker_killed_with_sigkill_leaves_no_pool_process(tmp_path: Path):
    with migrated_store("sqlite", tmp_path) as url, \
            workers(url, tmp_path, worker_jobs="2") as [worker]:
        worker.wait_ready()
        _run_to_the_end(url, worker.log)
        pool = _children(worker.process.pid)
        assert len(pool) >= 2, pool  # the pool stays up between runs

        worker.signal(signal.SIGKILL)
        worker.wait()

        assert _survivors(pool) == set()


def test_a_server_stopped_with_sigterm_leaves_no_pool_process(tmp_path: Path):
    with migrated_store("sqlite", tmp_path) as url:
        env = {k: v for k, v in os.environ.items() if not k.startswith("FOLDLINE_")}
        env.update({"FOLDLINE_DATABASE_URL": url, "FOLDLINE_WORKER_JOBS": "2",
                    "FOLDLINE_POLL_SECONDS": "0.1", "FOLDLINE_PORT": str(_free_port()),
                    "FOLDLINE_PRERENDER_REPORTS": "false"})
        log = tmp_path / "serve.log"
        with log.open("w") as out:
            server = subprocess.Popen([sys.executable, "-m", "service.cli.main", "serve"],
                                      cwd=REPO, env=env, stdout=out, stderr=subprocess.STDOUT,
                                      start_new_session=True)
        try:
            _run_to_the_end(url, log)
            pool = _children(server.pid)
            assert len(pool) >= 2, pool

            server.send_signal(signal.SIGTERM)
            server.wait(60)

            assert _survivors(pool) == set()
        finally:
            if server.poll() is None:
                os.killpg(server.pid, signal.SIGKILL)
                server.wait(10)
