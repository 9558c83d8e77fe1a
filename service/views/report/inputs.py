"""Everything the report needs about a stored run, read in one transaction.

A run of more than :data:`DETAILED_SERIES` series is reported in two parts: the first
series in run order in full (their results, data and charts), and every series in an
overview drawn from the stored ranking rows alone, so a department-wide run's report costs
a bounded amount of memory and drawing."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from sqlalchemy.orm import Session

from backtest.results import BacktestResult
from backtest.series import Series
from storage.results import completed_units, load_run_result, rank_table
from storage.runs import get_run
from storage.series import get_series, get_version, load_series

#: Series reported in full (ranking, calibration, diagnostics, charts); the rest of a larger
#: run appear in the overview table.
DETAILED_SERIES = 25


@dataclass(frozen=True)
class ReportInputs:
    """The arguments of :func:`service.views.report.render_run_report` for a stored run:
    ``overview`` holds the ranking rows of every series when some are not detailed."""

    result: BacktestResult
    run_meta: dict[str, Any]
    series_values: dict[str, Series]
    overview: list[dict[str, Any]] | None = None


def load_report_inputs(session: Session, run_id: int, *,
                       detailed: int = DETAILED_SERIES) -> ReportInputs:
    """The run's results for its first ``detailed`` series, its facts (who, when, which
    versions, units), the data of those series' versions keyed by fingerprint, and, for a
    run with more series, every series' ranking rows."""
    run = get_run(session, run_id)
    result = load_run_result(session, run_id, limit=detailed)
    detailed_fingerprints = {sr.series["fingerprint"] for sr in result.series}
    overview = (rank_table(session, run_id)
                if len(completed_units(session, run_id)) > detailed else None)
    versions = [get_version(session, v) for v in run.series_version_ids]
    units = {v.series_key: get_series(session, v.series_key).unit for v in versions}
    run_meta = {
        "run_id": run.id, "status": run.status, "requested_by": run.requested_by,
        "queued_at": run.queued_at, "started_at": run.started_at,
        "finished_at": run.finished_at, "failure_reason": run.failure_reason,
        "versions": [{"fingerprint": v.fingerprint, "number": v.number, "id": v.id,
                      "key": v.series_key} for v in versions],
        "units": units,
    }
    return ReportInputs(result, run_meta,
                        {v.fingerprint: load_series(session, v.id) for v in versions
                         if v.fingerprint in detailed_fingerprints}, overview)
