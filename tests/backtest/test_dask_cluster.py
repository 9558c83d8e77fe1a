"""A backtest run on a real dask.distributed cluster equals the local process pool's.

The fixture starts a ``dask scheduler`` and two ``dask worker`` processes (one thread each)
on loopback from this repository's interpreter, as a deployment would run them, and
always stops them afterwards.
"""

import json
import subprocess
import sys
import time
from pathlib import Path

import pytest
from dask.distributed import Client

from backtest.candidates import parse_candidates
from backtest.demo import demo_series
from backtest.engine import run_backtest
from backtest.plan import parse_plan

REPO = Path(__file__).resolve().parents[2]
STARTUP_SECONDS = 30
CANDIDATES = [
    {"family": "arima", "order": [1, 1, 0], "deterministic": "drift", "transform": "log"},
    {"family": "ets", "error": "multiplicative", "trend": "damped", "season": "none"},
    {"family": "theta"},
    {"family": "benchmark", "method": "drift"},
]


def _start(args: list[str], log: Path) -> subprocess.Popen:
    with log.open("w") as sink:
        return subprocess.Popen([sys.executable, "-m", "dask", *args], cwd=REPO,
                                stdout=subprocess.DEVNULL, stderr=sink)


def _address(scheduler_file: Path, scheduler: subprocess.Popen) -> str:
    deadline = time.monotonic() + STARTUP_SECONDS
    while time.monotonic() < deadline and scheduler.poll() is None:
        if scheduler_file.exists() and scheduler_file.stat().st_size:
            return json.loads(scheduler_file.read_text())["address"]
        time.sleep(0.1)
    raise RuntimeError("the dask scheduler did not start")


def _stop(processes: list[subprocess.Popen]) -> None:
    for process in processes:
        process.terminate()
    for process in processes:
        try:
            process.wait(timeout=10)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait()


@pytest.fixture(scope="module")
def cluster(tmp_path_factory):
    """Address of a loopback scheduler with two single-threaded workers."""
    logs = tmp_path_factory.mktemp("dask")
    scheduler_file = logs / "scheduler.json"
    processes = [_start(["scheduler", "--host", "127.0.0.1", "--port", "0", "--no-dashboard",
                         "--scheduler-file", str(scheduler_file)], logs / "scheduler.log")]
    try:
        address = _address(scheduler_file, processes[0])
        for i in range(2):
            processes.append(_start(["worker", address, "--nthreads", "1", "--no-nanny",
                                     "--no-dashboard"], logs / f"worker{i}.log"))
        with Client(address, set_as_default=False) as client:
            client.wait_for_workers(2, timeout=STARTUP_SECONDS)
        yield address
    finally:
        _stop(processes)


def _without_timing(result) -> dict:
    body = result.to_dict()
    body.pop("timing")
    return body


def test_cluster_run_equals_local_pool(cluster):
    series = demo_series()[:2]
    candidates = parse_candidates(CANDIDATES)
    plan = parse_plan({"horizon": 3, "max_origins": 5, "refit": 2, "seed": 9})
    remote = run_backtest(series, candidates, plan, scheduler=cluster)
    local = run_backtest(series, candidates, plan, n_jobs=2)
    assert _without_timing(remote) == _without_timing(local)
    with Client(cluster, set_as_default=False) as client:
        ran_engine = client.run(lambda: "backtest.runner" in sys.modules)
    assert len(ran_engine) == 2 and all(ran_engine.values())
