"""The BI ranking reads indexes, not the wide result rows, on SQLite.

A unit's ``series_result`` row carries its evidence document (hundreds of kB) and a unit
has over a thousand score rows, of which the ranking needs eight; the query plan must find
both through their indexes (``bench/ranking_load.py`` measures what this is worth).
"""

from __future__ import annotations

from sqlalchemy import create_engine, event
from sqlalchemy.orm import Session

from storage.db import upgrade
from storage.results import ranking_table


def test_ranking_plan_uses_the_unit_and_score_indexes(tmp_path):
    url = f"sqlite:///{tmp_path / 'plan.db'}"
    upgrade(url)
    engine = create_engine(url)
    statements: list[tuple[str, tuple]] = []
    event.listen(engine, "before_cursor_execute",
                 lambda _c, _cur, sql, params, _ctx, _many: statements.append((sql, params)))
    with Session(engine) as session:
        ranking_table(session, metric="mase", horizon=None, level=None, limit=10)
    sql, params = statements[-1]
    with engine.connect() as connection:
        plan = [row[-1] for row in connection.exec_driver_sql(
            "EXPLAIN QUERY PLAN " + sql, params)]
    engine.dispose()
    assert any("COVERING INDEX ix_series_result_run_id" in step for step in plan), plan
    assert any("COVERING INDEX ix_score_run_id" in step for step in plan), plan
    assert not any(step.startswith("SCAN score") for step in plan), plan
