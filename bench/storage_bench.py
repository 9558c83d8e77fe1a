"""Write and read back one large run through the storage layer, on SQLite and PostgreSQL.

The run has the size of a big production backtest: by default 1,000 series x 8 candidates
x 36 origins x 12 horizons (3,456,000 forecast rows) with 80 % and 95 % bounds (another
6,912,000 rows). Results are synthetic but FoldResult-shaped (no model is fitted) and go
through the real path: one transaction per series with ``write_series_result``, then
``load_series_result`` per series. Prints rows per second and the space used.

    python bench/storage_bench.py [--series N] [--backend sqlite|postgresql|both]
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
import uuid
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import numpy as np
from sqlalchemy import Engine, create_engine, func, select, text
from sqlalchemy.engine import make_url

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from backtest.candidates import parse_candidates  # noqa: E402
from backtest.plan import parse_plan  # noqa: E402
from backtest.results import CandidateInfo, FoldResult, RankRow, Score, SeriesResult  # noqa: E402
from backtest.series import Series, make_series  # noqa: E402
from storage.audit import verify_audit_log  # noqa: E402
from storage.db import (  # noqa: E402  # noqa: E402
    ForecastBound,
    ForecastRecord,
    make_engine,
    session_factory,
    upgrade,  # noqa: E402
)
from storage.results import load_series_result, write_series_result  # noqa: E402
from storage.runs import finish_run, queue_run, start_run  # noqa: E402
from storage.series import save_series_version  # noqa: E402

CANDIDATES = 8
ORIGINS = 36
HORIZON = 12
LEVELS = (80, 95)
N_OBS = 120
METRICS = ("mase", "rmsse", "smape", "mae", "rmse", "me")
LEVEL_METRICS = ("coverage", "winkler", "msis")
SERVER_URL = "postgresql+psycopg://postgres@127.0.0.1:5432/test"


def candidate_specs() -> list[dict]:
    methods = [{"family": "benchmark", "method": m} for m in ("naive", "drift", "mean")]
    models = [{"family": "arima", "order": [p, 1, 1]} for p in range(CANDIDATES - 3)]
    return methods + models


def series_of(i: int, rng: np.random.Generator) -> Series:
    labels = [f"{2010 + t // 12}-{t % 12 + 1:02d}" for t in range(N_OBS)]
    return make_series(f"bench/{i:05d}", "P1M", zip(labels, rng.normal(100, 10, N_OBS)))


def synthetic_result(series: Series, infos: tuple[CandidateInfo, ...],
                     rng: np.random.Generator) -> SeriesResult:
    """A SeriesResult of the benchmark's shape with random numbers."""
    folds = []
    for info in infos:
        for k in range(ORIGINS):
            end = N_OBS - HORIZON - ORIGINS + 1 + k
            point = rng.normal(100, 5, HORIZON)
            width = np.abs(rng.normal(10, 1, HORIZON))
            folds.append(FoldResult(
                series.key, info.candidate_id, k, series.label(end - 1), series.label(0), end,
                True, "ok", None, {"sigma": float(width[0])}, (),
                tuple(series.label(end + h) for h in range(HORIZON)),
                tuple(float(v) for v in series.values[end:end + HORIZON]),
                tuple(point.tolist()),
                {lv: tuple((point - width * lv / 80).tolist()) for lv in LEVELS},
                {lv: tuple((point + width * lv / 80).tolist()) for lv in LEVELS},
                1.5, 2.5))
    scores = [Score(info.candidate_id, h, m, None, float(rng.random()), ORIGINS)
              for info in infos for h in [*range(1, HORIZON + 1), None] for m in METRICS]
    scores += [Score(info.candidate_id, h, m, lv, float(rng.random()), ORIGINS)
               for info in infos for h in [*range(1, HORIZON + 1), None]
               for lv in LEVELS for m in LEVEL_METRICS]
    ranking = [RankRow(i + 1, info.candidate_id, info.label, float(rng.random()), 1.0,
                       i == 0, ORIGINS, 0) for i, info in enumerate(infos)]
    return SeriesResult(series.summary(), infos, infos[0].candidate_id, tuple(folds),
                        tuple(scores), tuple(ranking), {"diagnostics": {"ljung_box_p": 0.4}})


def bench(url: str, n_series: int) -> dict[str, float]:
    engine = make_engine(url)
    sessions = session_factory(engine)
    rng = np.random.default_rng(0)
    candidates = parse_candidates(candidate_specs())
    infos = tuple(CandidateInfo(c.id, c.label(12), c.canonical) for c in candidates)
    plan = parse_plan({"horizon": HORIZON, "max_origins": ORIGINS, "levels": list(LEVELS)})
    series = [series_of(i, rng) for i in range(n_series)]
    with sessions.begin() as session:
        versions = [save_series_version(session, s, actor="bench").version.id for s in series]
        run = queue_run(session, series_version_ids=versions, candidates=candidates, plan=plan,
                        actor="bench")
        start_run(session, run.id, actor="bench")
    write_seconds = 0.0
    for s, version in zip(series, versions):
        result = synthetic_result(s, infos, rng)
        started = time.perf_counter()
        with sessions.begin() as session:
            write_series_result(session, run.id, version, result, actor="bench")
        write_seconds += time.perf_counter() - started
    with sessions.begin() as session:
        finish_run(session, run.id, actor="bench", software={"bench": "1"})
    started = time.perf_counter()
    with sessions() as session:
        for version in versions:
            load_series_result(session, run.id, version)
    read_seconds = time.perf_counter() - started
    started = time.perf_counter()
    with sessions() as session:
        scanned = len(session.execute(select(ForecastRecord.__table__)).all())
    scan_seconds = time.perf_counter() - started
    started = time.perf_counter()
    with sessions() as session:
        report = verify_audit_log(session)
    verify_seconds = time.perf_counter() - started
    with sessions() as session:
        forecasts = session.scalar(select(func.count()).select_from(ForecastRecord))
        bounds = session.scalar(select(func.count()).select_from(ForecastBound))
    sizes = space_used(engine)
    engine.dispose()
    assert report.ok and scanned == forecasts
    return {"forecast rows": forecasts, "bound rows": bounds, "write s": write_seconds,
            "read s": read_seconds, "scan s": scan_seconds, "verify s": verify_seconds,
            **sizes}


def space_used(engine: Engine) -> dict[str, float]:
    mb = 1024 * 1024
    if engine.dialect.name == "sqlite":
        raw = engine.raw_connection()  # outside any transaction, as a checkpoint needs
        raw.cursor().execute("PRAGMA wal_checkpoint(TRUNCATE)")
        raw.close()
        return {"file MB": Path(engine.url.database).stat().st_size / mb}
    size = "SELECT pg_total_relation_size(CAST(:t AS regclass))"
    with engine.connect() as connection:
        return {"forecast MB": connection.scalar(text(size), {"t": "forecast"}) / mb,
                "forecast_bound MB": connection.scalar(text(size), {"t": "forecast_bound"}) / mb,
                "database MB": connection.scalar(text(
                    "SELECT pg_database_size(current_database())")) / mb}


@contextmanager
def sqlite_store() -> Iterator[str]:
    with tempfile.TemporaryDirectory() as directory:
        url = f"sqlite:///{directory}/bench.db"
        upgrade(url)
        yield url


@contextmanager
def postgres_store(server_url: str) -> Iterator[str]:
    server = create_engine(server_url, isolation_level="AUTOCOMMIT")
    name = f"foldline_bench_{uuid.uuid4().hex[:8]}"
    with server.connect() as connection:
        connection.execute(text(f'CREATE DATABASE "{name}"'))
    try:
        url = make_url(server_url).set(database=name).render_as_string(hide_password=False)
        upgrade(url)
        yield url
    finally:
        with server.connect() as connection:
            connection.execute(text(f'DROP DATABASE "{name}" WITH (FORCE)'))
        server.dispose()


def report(backend: str, figures: dict[str, float]) -> None:
    rows = figures["forecast rows"] + figures["bound rows"]
    print(f"\n{backend}: {figures['forecast rows']:,} forecast rows + "
          f"{figures['bound rows']:,} bound rows")
    print(f"  write  {figures['write s']:8.1f} s  {rows / figures['write s']:>12,.0f} rows/s  "
          f"({figures['forecast rows'] / figures['write s']:,.0f} forecast rows/s)")
    print(f"  read   {figures['read s']:8.1f} s  {rows / figures['read s']:>12,.0f} rows/s  "
          "(load_series_result, every series)")
    print(f"  scan   {figures['scan s']:8.1f} s  "
          f"{figures['forecast rows'] / figures['scan s']:>12,.0f} rows/s  "
          "(SELECT * FROM forecast)")
    print(f"  verify {figures['verify s']:8.1f} s  (audit log, re-digesting everything)")
    for name, value in figures.items():
        if name.endswith("MB"):
            print(f"  {name:<18} {value:10,.1f}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--series", type=int, default=1000)
    parser.add_argument("--backend", choices=["sqlite", "postgresql", "both"], default="both")
    parser.add_argument("--postgres-url", default=SERVER_URL,
                        help="server URL used to create and drop a scratch database")
    args = parser.parse_args()
    if args.backend in ("sqlite", "both"):
        with sqlite_store() as url:
            report("SQLite", bench(url, args.series))
    if args.backend in ("postgresql", "both"):
        with postgres_store(args.postgres_url) as url:
            report("PostgreSQL", bench(url, args.series))


if __name__ == "__main__":
    main()
