"""A worker killed with SIGKILL while scoring the outcomes that new actuals made due: after
a restart every due outcome set is recorded exactly once, equal to scoring it afresh."""

from __future__ import annotations

import signal
from collections import Counter
from pathlib import Path

import pytest
from sqlalchemy.orm import Session

from backtest.ledger import score_outcomes
from backtest.series import Series, make_series
from storage.audit import outcomes_subject, verify_audit_log
from storage.ledger import current_outcomes, due_outcomes, get_issued
from storage.series import load_series, save_series_version
from tests.service.worker_helpers import ANALYST, events, sessions_on, wait_until, workers, writing
from tests.storage.builders import issue_and_record, monthly_series
from tests.storage.conftest import BACKENDS, migrated_store

SERIES = 12
FORECASTS_PER_SERIES = 10


def _extended(series: Series, values: list[float]) -> Series:
    """``series`` with ``values`` appended after its last period."""
    labels = [series.label(len(series) + i) for i in range(len(values))]
    return make_series(series.key, "P1M", [*zip(series.labels(), series.values.tolist()),
                                           *zip(labels, values)])


def _issue_forecasts(session: Session) -> list[Series]:
    """Several forecasts of each series; the series with the actuals that arrive later."""
    later = []
    for i in range(SERIES):
        series = monthly_series(f"stores/{i}", 36, seed=i)
        for j in range(FORECASTS_PER_SERIES):
            issue_and_record(session, series, horizon=2 + j % 3, seed=j,
                             method=("naive", "drift")[j % 2])
        later.append(_extended(series, [120.0 + i, 118.0 + i]))
    return later


@pytest.mark.parametrize("backend", BACKENDS)
def test_killed_scorer_leaves_each_due_outcome_scored_exactly_once(backend, tmp_path: Path):
    with migrated_store(backend, tmp_path) as url, sessions_on(url) as sessions:
        with writing(sessions) as session:
            later = _issue_forecasts(session)
        total = SERIES * FORECASTS_PER_SERIES
        with workers(url, tmp_path / "first") as [first]:
            first.wait_ready()
            with writing(sessions) as session:
                versions = [save_series_version(session, s, actor=ANALYST).version.id
                            for s in later]
                due = due_outcomes(session)

            def some_recorded() -> int:
                with sessions.begin() as session:
                    return len(events(session, "outcomes.recorded"))

            wait_until(some_recorded, "a first outcome set", log=first.log)
            first.signal(signal.SIGKILL)
            first.wait()
            before_restart = some_recorded()
        with workers(url, tmp_path / "second", count=2) as pair:

            def nothing_due() -> bool:
                with sessions.begin() as session:
                    return not due_outcomes(session)

            wait_until(nothing_due, "the restarted workers to score the rest", log=pair[0].log)
        with sessions.begin() as session:
            written = events(session, "outcomes.recorded")
            stored = {f: current_outcomes(session, f) for f, _ in due}
            actuals = {v: load_series(session, v) for v in versions}
            issued = {f: get_issued(session, f).forecast for f, _ in due}
            assert verify_audit_log(session).ok

    assert len(due) == total
    assert 1 <= before_restart < total
    assert Counter(e.subject for e in written) == Counter(outcomes_subject(f, v) for f, v in due)
    for forecast_id, version_id in due:
        found = stored[forecast_id]
        assert found is not None and found.series_version_id == version_id
        assert found.outcomes == score_outcomes(issued[forecast_id], actuals[version_id])
        assert len(found.outcomes) == 2
