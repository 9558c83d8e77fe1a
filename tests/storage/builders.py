"""Small real inputs for the storage tests: generated series, benchmark candidates, runs,
issued forecasts."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from sqlalchemy import text
from sqlalchemy.orm import Session

from backtest.candidates import Candidate, parse_candidate, parse_candidates
from backtest.engine import run_backtest
from backtest.ledger import issue_forecast
from backtest.plan import Plan, parse_plan
from backtest.results import BacktestResult
from backtest.series import Series, make_series
from storage.ledger import IssuedRecord, record_issued_forecast
from storage.results import write_series_result
from storage.runs import finish_run, queue_run, start_run
from storage.series import save_series_version

ACTOR = "analyst@example.org"


def monthly_series(key: str, n: int = 48, *, seed: int = 0, level: float = 100.0) -> Series:
    """A seasonal monthly series from 2019-01, identical for the same arguments."""
    rng = np.random.default_rng(seed)
    t = np.arange(n)
    values = level + 0.5 * t + 8 * np.sin(2 * np.pi * t / 12) + rng.normal(0, 2, n)
    labels = [f"{2019 + i // 12}-{i % 12 + 1:02d}" for i in range(n)]
    return make_series(key, "P1M", zip(labels, np.round(values, 2)))


def benchmark_candidates() -> tuple[Candidate, ...]:
    return parse_candidates([{"family": "benchmark", "method": "naive"},
                             {"family": "benchmark", "method": "drift"}])


def small_plan(**overrides: object) -> Plan:
    return parse_plan({"horizon": 4, "max_origins": 3, "levels": [80, 95], **overrides})


def run_and_store(session: Session, series: Sequence[Series], *,
                  plan: Plan | None = None) -> tuple[int, list[int], BacktestResult]:
    """Save the series, run the engine on them and store a succeeded run."""
    plan = plan or small_plan()
    candidates = benchmark_candidates()
    versions = [save_series_version(session, s, actor=ACTOR).version.id for s in series]
    run = queue_run(session, series_version_ids=versions, candidates=candidates, plan=plan,
                    actor=ACTOR)
    start_run(session, run.id, actor="worker-1")
    result = run_backtest(list(series), list(candidates), plan)
    for version, series_result in zip(versions, result.series):
        write_series_result(session, run.id, version, series_result, actor="worker-1")
    finish_run(session, run.id, actor="worker-1", software=result.software,
               timing=result.timing)
    return run.id, versions, result


def drop_guards(session: Session, table: str) -> None:
    """Drop an append-only table's triggers, as someone with database access could."""
    if session.get_bind().dialect.name == "postgresql":
        session.execute(text(f'DROP TRIGGER {table}_append_only ON "{table}"'))
        return
    for action in ("update", "delete"):
        session.execute(text(f"DROP TRIGGER {table}_no_{action}"))


def issue_and_record(session: Session, series: Series, *, horizon: int = 4, seed: int = 0,
                     method: str = "drift") -> IssuedRecord:
    """Save ``series``, issue a benchmark forecast from it and record it in the ledger."""
    version = save_series_version(session, series, actor=ACTOR).version
    candidate = parse_candidate({"family": "benchmark", "method": method})
    forecast = issue_forecast(series, candidate, horizon=horizon, seed=seed)
    return record_issued_forecast(session, series_version_id=version.id, forecast=forecast,
                                  actor=ACTOR)[0]
