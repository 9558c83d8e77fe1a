"""Full against incremental audit verification on a store with many events.

Builds a store through the real storage path: ``--series`` series with 120 monthly
observations each (two events each), one run over them with synthetic results for the
first ``--units`` series (the content the verification re-digests), then times:

- the full pass (``foldline audit verify``) and its peak Python memory (tracemalloc);
- the incremental pass right after (nothing new);
- the incremental pass after ``--more`` further series were stored.

    python bench/verify_bench.py [--series N] [--units N] [--more N] [--backend sqlite|postgresql]
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
import tracemalloc
import uuid
from collections.abc import Callable
from datetime import timedelta
from pathlib import Path
from typing import TypeVar

import numpy as np
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session, sessionmaker

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from backtest.candidates import parse_candidates  # noqa: E402
from backtest.plan import parse_plan  # noqa: E402
from backtest.results import CandidateInfo  # noqa: E402
from bench.storage_bench import (  # noqa: E402
    HORIZON,
    LEVELS,
    ORIGINS,
    SERVER_URL,
    candidate_specs,
    series_of,
    synthetic_result,
)
from storage.audit import (  # noqa: E402
    COVERAGE_OVERLAP,
    AuditReport,
    record_verified,
    verify_audit_log,
    verify_incrementally,
)
from storage.db import (  # noqa: E402
    make_engine,
    session_factory,
    upgrade,  # noqa: E402
)
from storage.results import write_series_result  # noqa: E402
from storage.runs import queue_run, start_run  # noqa: E402
from storage.series import save_series_version  # noqa: E402

T = TypeVar("T")


def build(sessions: sessionmaker[Session], n_series: int, n_units: int) -> None:
    rng = np.random.default_rng(0)
    candidates = parse_candidates(candidate_specs())
    infos = tuple(CandidateInfo(c.id, c.label(12), c.canonical) for c in candidates)
    plan = parse_plan({"horizon": HORIZON, "max_origins": ORIGINS, "levels": list(LEVELS)})
    series = [series_of(i, rng) for i in range(n_series)]
    with sessions.begin() as session:
        versions = [save_series_version(session, s, actor="bench").version.id for s in series]
        run = queue_run(session, series_version_ids=versions[:n_units], candidates=candidates,
                        plan=plan, actor="bench")
        start_run(session, run.id, actor="bench")
    for s, version in zip(series[:n_units], versions):
        with sessions.begin() as session:
            write_series_result(session, run.id, version, synthetic_result(s, infos, rng),
                                actor="bench")


def timed(work: Callable[[], T]) -> tuple[T, float]:
    """``work()`` and its wall time in seconds."""
    started = time.perf_counter()
    out = work()
    return out, time.perf_counter() - started


def peak_mb(work: Callable[[], object]) -> float:
    """The peak Python memory (tracemalloc, MB) of ``work()``; slows it, so timed apart."""
    tracemalloc.start()
    work()
    peak = tracemalloc.get_traced_memory()[1] / 1024 / 1024
    tracemalloc.stop()
    return peak


def incremental(sessions: sessionmaker[Session], overlap: timedelta = COVERAGE_OVERLAP,
                keep: bool = True) -> AuditReport:
    with sessions.begin() as session:
        report = verify_incrementally(session, overlap)
    if keep:
        with sessions.begin() as session:
            record_verified(session, report)
    return report


def full(sessions: sessionmaker[Session]) -> AuditReport:
    with sessions.begin() as session:
        return verify_audit_log(session)


def bench(url: str, n_series: int, n_units: int, n_more: int) -> None:
    upgrade(url)
    engine = make_engine(url)
    sessions = session_factory(engine)
    started = time.perf_counter()
    build(sessions, n_series, n_units)
    print(f"built {n_series} series, {n_units} result units in "
          f"{time.perf_counter() - started:.1f} s")
    whole, full_s = timed(lambda: full(sessions))
    full_mb = peak_mb(lambda: full(sessions))
    first, first_s = timed(lambda: incremental(sessions))
    same, same_s = timed(lambda: incremental(sessions))
    rng = np.random.default_rng(1)
    with sessions.begin() as session:
        for i in range(n_more):
            save_series_version(session, series_of(n_series + i, rng), actor="bench")
    # as on a store whose earlier records are older than the coverage overlap
    walk, walk_s = timed(lambda: incremental(sessions, timedelta(0), keep=False))
    walk_mb = peak_mb(lambda: incremental(sessions, timedelta(0), keep=False))
    # here every record is younger than the overlap, so its coverage is looked up again
    more, more_s = timed(lambda: incremental(sessions))
    engine.dispose()
    assert all(r.ok for r in (whole, first, same, walk, more)), (whole, first, same, walk, more)
    overlap = f"{COVERAGE_OVERLAP.total_seconds() / 60:.0f} min"
    rows = [("full pass (foldline audit verify)", whole, full_s, f"{full_mb:.1f}"),
            ("first API call (no head yet: full)", first, first_s, ""),
            ("incremental, nothing new", same, same_s, ""),
            (f"incremental, {n_more} new series, older records", walk, walk_s,
             f"{walk_mb:.1f}"),
            (f"  same, all records within the {overlap} overlap", more, more_s, "")]
    print(f"{'pass':<50}{'events':>8}{'seconds':>10}{'peak MB':>9}")
    for name, report, seconds, mb in rows:
        print(f"{name:<50}{report.events_checked:>8}{seconds:>10.3f}{mb:>9}")
    print(f"full / incremental ({n_more} new series, older records): {full_s / walk_s:.0f}x")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--series", type=int, default=5000)
    parser.add_argument("--units", type=int, default=100)
    parser.add_argument("--more", type=int, default=10)
    parser.add_argument("--backend", choices=("sqlite", "postgresql"), default="sqlite")
    args = parser.parse_args()
    if args.backend == "sqlite":
        with tempfile.TemporaryDirectory() as directory:
            bench(f"sqlite:///{Path(directory) / 'bench.db'}", args.series, args.units,
                  args.more)
        return
    server = create_engine(SERVER_URL, isolation_level="AUTOCOMMIT")
    name = f"foldline_verify_bench_{uuid.uuid4().hex[:8]}"
    with server.connect() as connection:
        connection.execute(text(f'CREATE DATABASE "{name}"'))
    try:
        bench(make_url(SERVER_URL).set(database=name).render_as_string(hide_password=False),
              args.series, args.units, args.more)
    finally:
        with server.connect() as connection:
            connection.execute(text(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)'))
        server.dispose()


if __name__ == "__main__":
    main()
