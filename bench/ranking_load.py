"""Load on the BI ranking endpoint: 1,000 series x 8 candidates, 20 concurrent clients.

Builds a SQLite store with one finished run over 1,000 generated monthly series (8
candidates: the engine's real result for one series, re-labelled onto each of the others,
so the tables have their real shape), starts ``foldline serve`` on loopback without a
worker, and lets 20 client threads page through ``GET /v1/rankings`` (JSON, 500 rows a
page) for a bounded number of requests each. Prints requests per second and p50 / p99
latency.

    .venv/bin/python bench/ranking_load.py [--series 1000] [--requests 20] [--store FILE]

``--store FILE`` keeps the SQLite store in FILE and reuses it when it exists (building
it takes minutes), so code changes can be compared on the same data.
"""

from __future__ import annotations

import argparse
import dataclasses
import os
import statistics
import sys
import tempfile
import threading
import time
from collections import Counter
from pathlib import Path

import httpx
import numpy as np

from backtest.candidates import parse_candidates
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from backtest.series import make_series
from service.demo.run import _free_port, running_server
from service.usecases.keys import issue_key
from storage.db import make_engine, session_factory, upgrade
from storage.results import write_series_result
from storage.runs import finish_run, queue_run, start_run
from storage.series import save_series_version

CANDIDATES = [{"family": "benchmark", "method": m} for m in ("naive", "drift", "mean")] + [
    {"family": "theta"}, {"family": "theta", "season": "never"},
    {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]}},
    {"family": "arima", "order": [1, 0, 0], "seasonal": {"order": [0, 1, 1]},
     "deterministic": "drift"},
]  # with the seasonal-naive benchmark the engine adds: 8 candidates
PLAN = {"horizon": 12, "max_origins": 6, "refit": 6}


def _series(i: int):
    rng = np.random.default_rng(i)
    t = np.arange(96)
    values = 500 + 2 * t + 40 * np.sin(2 * np.pi * t / 12) + np.cumsum(rng.normal(0, 5, 96))
    labels = [f"{2017 + k // 12}-{k % 12 + 1:02d}" for k in range(96)]
    return make_series(f"line/{i:04d}", "P1M", zip(labels, values.round(2), strict=True))


def build_store(url: str, count: int) -> str:
    """Store ``count`` series and one finished run; return a reader key."""
    upgrade(url)
    engine = make_engine(url)
    sessions = session_factory(engine)
    series = [_series(i) for i in range(count)]
    candidates, plan = parse_candidates(CANDIDATES), parse_plan(PLAN)
    template = run_backtest(series[:1], candidates, plan, n_jobs=2).series[0]
    with sessions.begin() as session:
        versions = [save_series_version(session, s, actor="bench").version.id for s in series]
        run = queue_run(session, series_version_ids=versions, candidates=candidates,
                        plan=plan, actor="bench")
        start_run(session, run.id, actor="bench")
    for s, version in zip(series, versions):
        result = dataclasses.replace(
            template, series=s.summary(),
            folds=tuple(dataclasses.replace(f, series_key=s.key) for f in template.folds))
        with sessions.begin() as session:
            write_series_result(session, run.id, version, result, actor="bench")
    with sessions.begin() as session:
        finish_run(session, run.id, actor="bench", software={"bench": "1"})
        _, token = issue_key(session, name="bench-reader", role="reader", actor="bench")
    engine.dispose()
    return token.text


def reader_key(url: str) -> str:
    """A new reader key on an existing store."""
    upgrade(url)
    engine = make_engine(url)
    with session_factory(engine).begin() as session:
        _, token = issue_key(session, name=f"bench-reader-{time.time_ns()}", role="reader",
                             actor="bench")
    engine.dispose()
    return token.text


def load(base: str, token: str, clients: int, requests: int
         ) -> tuple[list[float], Counter[int]]:
    """Latencies (s) of the successful ones of ``clients`` x ``requests`` ranking requests
    (pages spread evenly), and the count of answers per status code."""
    latencies: list[float] = []
    statuses: Counter[int] = Counter()
    lock = threading.Lock()

    def client(index: int) -> None:
        with httpx.Client(base_url=base, headers={"Authorization": f"Bearer {token}"},
                          timeout=300) as http:
            for k in range(requests):
                offset = ((index * requests + k) * 500) % 8000
                started = time.perf_counter()
                answer = http.get("/v1/rankings", params={"limit": 500, "offset": offset})
                elapsed = time.perf_counter() - started
                with lock:
                    statuses[answer.status_code] += 1
                    if answer.status_code == 200:
                        latencies.append(elapsed)

    threads = [threading.Thread(target=client, args=(i,)) for i in range(clients)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    return latencies, statuses


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--series", type=int, default=1000)
    parser.add_argument("--clients", type=int, default=20)
    parser.add_argument("--requests", type=int, default=20, help="per client")
    parser.add_argument("--store", type=Path, help="SQLite file to keep and reuse")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        store = args.store or Path(folder) / "bench.db"
        url = f"sqlite:///{store}"
        if store.exists():
            token = reader_key(url)
            print(f"store: reusing {store}")
        else:
            started = time.perf_counter()
            token = build_store(url, args.series)
            built = time.perf_counter() - started
            print(f"store: {args.series} series x 8 candidates in {built:.0f} s")
        env = {**os.environ, "FOLDLINE_DATABASE_URL": url, "FOLDLINE_HOST": "127.0.0.1",
               "FOLDLINE_PORT": str(_free_port()), "FOLDLINE_EMBEDDED_WORKER": "false"}
        with running_server(env, Path(folder) / "server.log") as base:
            load(base, token, 2, 3)  # warm-up
            started = time.perf_counter()
            latencies, statuses = load(base, token, args.clients, args.requests)
            wall = time.perf_counter() - started
    print(f"answers by status: {dict(sorted(statuses.items()))}")
    if not latencies:
        return 1
    ordered = sorted(latencies)
    p99 = ordered[min(len(ordered) - 1, int(0.99 * len(ordered)))]
    print(f"{len(latencies)} successful requests of 500 ranking rows by {args.clients} clients in "
          f"{wall:.1f} s: {len(latencies) / wall:.1f} requests/s, "
          f"p50 {statistics.median(latencies) * 1000:.0f} ms, p99 {p99 * 1000:.0f} ms")
    return 0


if __name__ == "__main__":
    sys.exit(main())
