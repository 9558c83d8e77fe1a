"""The monitoring yardstick read from a store: the backtest's promise leaves out the target
periods a fill policy made, as the run's stored scores do (SQLite and PostgreSQL)."""

from __future__ import annotations

from pathlib import Path

import pytest

from backtest.series import make_series
from service.usecases.monitoring import monitor_series
from storage.db import make_engine, session_factory
from storage.series import filled_periods
from tests.storage.builders import monthly_series, run_and_store
from tests.storage.conftest import BACKENDS, migrated_store

GAP = "2022-10"


@pytest.mark.parametrize("backend", BACKENDS)
def test_the_promise_equals_the_stored_scores_without_filled_periods(backend: str,
                                                                     tmp_path: Path):
    whole = monthly_series("sales/gappy", seed=5)
    rows = [(p, v) for p, v in zip(whole.labels(), whole.values) if p != GAP]
    series = make_series("sales/gappy", "P1M", rows, fill="linear")
    with migrated_store(backend, tmp_path) as url:
        engine = make_engine(url)
        try:
            with session_factory(engine).begin() as session:
                _, versions, result = run_and_store(session, [series])
            sr = result.series[0]
            cid = sr.candidates[0].candidate_id
            with session_factory(engine).begin() as session:
                assert filled_periods(session, versions[0]) == (GAP,)
                promise = monitor_series(session, "sales/gappy", cid).report.expectation
        finally:
            engine.dispose()
    mase = {s.horizon: s for s in sr.scores
            if s.candidate_id == cid and s.metric == "mase" and s.level is None}
    folds = [f for f in sr.folds if f.candidate_id == cid]
    reached = {h for f in folds for h, p in enumerate(f.periods, start=1) if p == GAP}
    assert reached  # the filled period is a target of some fold
    for h, errors in promise.scaled_abs_errors.items():
        assert len(errors) == mase[h].count == len(folds) - (h in reached)
        assert promise.mase_by_horizon[h] == pytest.approx(mase[h].value, rel=1e-12)
