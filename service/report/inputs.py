"""Everything the report needs about a stored run, read in one transaction."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from sqlalchemy.orm import Session

from backtest.results import BacktestResult
from backtest.series import Series
from storage.results_store import load_run_result
from storage.runs import get_run
from storage.series_catalog import get_series
from storage.series_store import get_version, load_series


@dataclass(frozen=True)
class ReportInputs:
    """The arguments of :func:`service.report.render_run_report` for a stored run."""

    result: BacktestResult
    run_meta: dict[str, Any]
    series_values: dict[str, Series]


def load_report_inputs(session: Session, run_id: int) -> ReportInputs:
    """The run's results, its facts (who, when, which versions, units) and the data of every
    series version it used, keyed by fingerprint."""
    run = get_run(session, run_id)
    result = load_run_result(session, run_id)
    versions = [get_version(session, v) for v in run.series_version_ids]
    units = {v.series_key: get_series(session, v.series_key).unit for v in versions}
    run_meta = {
        "run_id": run.id, "status": run.status, "requested_by": run.requested_by,
        "queued_at": run.queued_at, "started_at": run.started_at,
        "finished_at": run.finished_at, "failure_reason": run.failure_reason,
        "versions": [{"fingerprint": v.fingerprint, "number": v.number, "id": v.id}
                     for v in versions],
        "units": units,
    }
    return ReportInputs(result, run_meta,
                        {v.fingerprint: load_series(session, v.id) for v in versions})
