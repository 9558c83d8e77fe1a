"""A run cut into chunks of origins on two worker processes stores the same rows as the
same run computed whole in one process."""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from backtest.candidates import parse_candidates
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from storage.audit import UNIT_TABLES
from storage.db import UtcDateTime
from storage.results import write_series_result
from storage.runs import queue_run, start_run
from storage.series import save_series_version
from tests.storage.builders import ACTOR, monthly_series


def _stored(session: Session, run_id: int) -> dict[str, list[tuple]]:
    """Every result row of a run without its run id and write times, by table."""
    out = {}
    for table in UNIT_TABLES:
        columns = [c for c in table.columns
                   if c.name != "run_id" and not isinstance(c.type, UtcDateTime)]
        rows = session.execute(select(*columns).where(table.c.run_id == run_id)).all()
        out[table.name] = sorted(tuple(map(repr, row)) for row in rows)
    return out


def test_a_cut_run_stores_the_rows_of_the_whole_run(session: Session):
    series = monthly_series("sales/chunked", n=60, seed=4)
    candidates = parse_candidates([{"family": "arima", "order": [1, 1, 0],
                                    "deterministic": "drift"}])
    plan = parse_plan({"horizon": 4, "max_origins": 10, "refit": 2, "levels": [80, 95]})
    version = save_series_version(session, series, actor=ACTOR).version.id
    stored = []
    for n_jobs in (1, 2):
        run = queue_run(session, series_version_ids=[version], candidates=candidates,
                        plan=plan, actor=ACTOR)
        start_run(session, run.id, actor="worker-1")
        (result,) = run_backtest([series], candidates, plan, n_jobs=n_jobs).series
        write_series_result(session, run.id, version, result, actor="worker-1")
        stored.append(_stored(session, run.id))
    assert stored[0]["fold_result"] and stored[0] == stored[1]
