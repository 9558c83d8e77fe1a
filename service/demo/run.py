"""``foldline demo``: the invented scenario, end to end through the service.

It starts ``foldline serve`` on the embedded default (a SQLite file under the output
directory, an embedded worker), creates a submitter key, posts the scenario's series as a
CSV upload, submits a backtest, follows its progress, pulls the ranking over HTTP and
prints it, then continues in time (:mod:`service.demo.ledger`): champions, issued
forecasts, later actuals and the monitoring flag a drifting series raises. Every step is a
real HTTP call to a real server process.

The output folder is the demo's own: it deletes and overwrites nothing. A new or empty
folder is marked with :data:`MARKER` (a short text file saying what the folder is); each
invocation then writes into a new numbered subfolder (``1/``, ``2/``, ...) with its own
store, log, CSV tables and report, so running the demo again leaves earlier runs as they
were. A non-empty folder without the marker (a real store's folder, say) is refused.
"""

from __future__ import annotations

import io
import os
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import httpx

from backtest.demo import DEMO_CANDIDATES, DEMO_PLAN, demo_series
from backtest.tidy import write_csv
from service.cli.terminal import ProgressBar, ranking_table
from service.demo.ledger import continue_demo
from service.demo.remedies import headlines, remedy_lines

FINAL = ("succeeded", "failed", "cancelled")
MARKER = ".foldline-demo"
MARKER_TEXT = ("This folder holds the output of `foldline demo`, one numbered subfolder per "
               "invocation.\nThe demo writes new subfolders here and never deletes or "
               "overwrites a file.\n")


class OutputFolderError(Exception):
    """The demo's output folder holds files the demo did not write."""


def demo_folder(out: Path) -> Path:
    """A new, empty subfolder of ``out`` for this invocation.

    ``out`` must be new, empty, or marked as the demo's by an earlier invocation;
    otherwise :class:`OutputFolderError` is raised and nothing is written.
    """
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputFolderError(f"{out}: {exc.strerror}") from None
    marker = out / MARKER
    if not marker.is_file():
        if any(out.iterdir()):
            raise OutputFolderError(
                f"{out} is not empty and was not made by foldline demo (no {MARKER} file); "
                "give --out a new or empty folder")
        with marker.open("x") as handle:
            handle.write(MARKER_TEXT)
    number = 1 + max((int(p.name) for p in out.iterdir() if p.name.isdigit()), default=0)
    while True:
        try:
            (out / str(number)).mkdir()
            return out / str(number)
        except FileExistsError:  # another invocation took this number meanwhile
            number += 1


def _free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        port: int = probe.getsockname()[1]
        return port


def _scenario_csv() -> str:
    rows = ({"series_key": s.key, "period": p, "value": v, "frequency": "P1M"}
            for s in demo_series() for p, v in zip(s.labels(), s.values.tolist()))
    out = io.StringIO()
    write_csv(rows, ("series_key", "period", "value", "frequency"), out)
    return out.getvalue()


@contextmanager
def running_server(env: dict[str, str], log: Path, timeout: float = 90.0) -> Iterator[str]:
    """Start ``foldline serve`` and yield its base URL once it answers ready."""
    url = f"http://{env['FOLDLINE_HOST']}:{env['FOLDLINE_PORT']}"
    with log.open("w") as sink:
        server = subprocess.Popen([sys.executable, "-m", "service.cli.main", "serve"], env=env,
                                  stdout=sink, stderr=subprocess.STDOUT)
        try:
            _wait_ready(url, server, timeout)
            yield url
        finally:
            server.terminate()
            try:
                server.wait(timeout=30)
            except subprocess.TimeoutExpired:
                server.kill()
                server.wait()


def _wait_ready(url: str, server: subprocess.Popen[bytes], timeout: float) -> None:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if server.poll() is not None:
            raise RuntimeError(f"the server exited with code {server.returncode}")
        try:
            if httpx.get(f"{url}/health/ready", timeout=2).status_code == 200:
                return
        except httpx.TransportError:
            pass
        time.sleep(0.2)
    raise RuntimeError(f"the server did not become ready within {timeout:.0f} s")


def _create_key(env: dict[str, str]) -> str:
    done = subprocess.run([sys.executable, "-m", "service.cli.main", "keys", "create", "--role",
                           "submitter", "--name", "demo"], env=env, capture_output=True,
                          text=True, check=True)
    return done.stdout.strip().splitlines()[0]


def run_demo(out: Path, jobs: int) -> int:
    """Run the scenario through a freshly started service; write outputs into a new
    subfolder of ``out`` (:func:`demo_folder`)."""
    out = demo_folder(out)
    store = out / "foldline.db"
    env = {**os.environ, "FOLDLINE_DATABASE_URL": f"sqlite:///{store.resolve()}",
           "FOLDLINE_HOST": "127.0.0.1", "FOLDLINE_PORT": str(_free_port()),
           "FOLDLINE_WORKER_JOBS": str(jobs), "FOLDLINE_POLL_SECONDS": "0.2"}
    print("Tallow & Finch Provisioners (an invented wholesaler): starting the service on "
          f"{env['FOLDLINE_HOST']}:{env['FOLDLINE_PORT']} with store {store}")
    with running_server(env, out / "server.log") as url:
        headers = {"Authorization": f"Bearer {_create_key(env)}"}
        with httpx.Client(base_url=url, headers=headers, timeout=60) as client:
            return _submit_and_report(client, out)


def _submit_and_report(client: httpx.Client, out: Path) -> int:
    upload = client.post("/v1/series/upload", content=_scenario_csv(),
                         headers={"Content-Type": "text/csv"})
    upload.raise_for_status()
    keys = [s.key for s in demo_series()]
    print(f"posted {len(keys)} monthly series; submitting {len(DEMO_CANDIDATES)} candidates, "
          f"horizon {DEMO_PLAN['horizon']}, up to {DEMO_PLAN['max_origins']} origins each")
    submitted = time.monotonic()
    answer = client.post("/v1/runs", json={"series": {"keys": keys},
                                           "candidates": DEMO_CANDIDATES, "plan": DEMO_PLAN},
                         headers={"Idempotency-Key": "demo"})
    answer.raise_for_status()
    run = _follow(client, answer.headers["Location"])
    elapsed = time.monotonic() - submitted
    if run["status"] != "succeeded":
        print(f"foldline: error: run {run['id']} {run['status']}: {run['failure_reason']}",
              file=sys.stderr)
        return 1
    ranking = client.get(f"{run['url']}/ranking").json()["items"]
    (out / "ranking.csv").write_text(client.get(f"{run['url']}/ranking",
                                                params={"format": "csv"}).text)
    _print_ranking(ranking)
    remedies = remedy_lines(ranking)
    print("\nremedies (empirical intervals from Theta's own past errors; a combination):")
    print("\n".join(f"  {line}" for line in remedies) or "  no change")
    print(f"\nrun {run['id']}: {elapsed:.1f} s from submission to finished "
          f"({run['progress']['folds_total']} folds); ranking CSV: {out / 'ranking.csv'}")
    print(f"run report (HTML, prints on A4): {_write_report(client, run['url'], out)}")
    if continue_demo(client, run["id"], out) != 0:
        return 1
    print(f"\nwhere the remedies worked (run {run['id']}):")
    print("\n".join(f"  {line}" for line in headlines(remedies)) or "  nowhere")
    print("\nTo explore the API: FOLDLINE_DATABASE_URL=sqlite:///"
          f"{(out / 'foldline.db').resolve()} .venv/bin/foldline serve, then open "
          "http://127.0.0.1:8000/docs (create a key with .venv/bin/foldline keys create).")
    return 0


def _write_report(client: httpx.Client, run_url: str, out: Path) -> Path:
    """Fetch the run's report (the worker renders it as the run ends; this waits for it)."""
    answer = client.get(f"{run_url}/report", timeout=900)
    answer.raise_for_status()
    path = (out / "report.html").resolve()
    path.write_text(answer.text, encoding="utf-8")
    return path


def _follow(client: httpx.Client, location: str) -> dict[str, Any]:
    bar = ProgressBar()
    while True:
        run: dict[str, Any] = client.get(location).json()
        total = run["progress"]["folds_total"]
        if total:
            bar(run["progress"]["folds_done"], total)
        if run["status"] in FINAL:
            return run
        time.sleep(0.5)


def _print_ranking(rows: list[dict[str, Any]]) -> None:
    by_series: dict[str, list[dict[str, Any]]] = {}
    for row in rows:
        by_series.setdefault(row["series_key"], []).append(row)
    score = DEMO_PLAN.get("rank_by", "mase").upper()
    for key, series_rows in by_series.items():
        print()
        print(ranking_table(f"{key}  (ranked by {score} over all horizons)", series_rows,
                            score))
