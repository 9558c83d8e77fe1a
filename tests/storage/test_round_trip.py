"""The engine's results come back from storage exactly as they were written."""

from __future__ import annotations

from sqlalchemy.orm import Session

from storage.results import load_run_result, load_series_result
from tests.storage.builders import monthly_series, run_and_store


def test_engine_result_round_trips_unchanged(session: Session):
    series = [monthly_series("sales/north", seed=1), monthly_series("sales/south", seed=2)]
    run_id, versions, result = run_and_store(session, series)

    loaded = load_run_result(session, run_id)

    assert loaded == result
    assert load_series_result(session, run_id, versions[1]) == result.series[1]
