"""The report of a stored run: from the cache when it is there, else rendered and filed.

Only final runs have a report (a queued or running one is still changing). Rendering holds
the process's drawing lock (:data:`service.views.charts.render.DRAWING`), so a second request for
the same run waits for the first and then finds the cached file instead of rendering again.
"""

from __future__ import annotations

from sqlalchemy.orm import Session, sessionmaker

from service.errors import RunNotFinishedError
from service.views.charts.render import DRAWING
from service.views.report.builder import render_run_report
from service.views.report.cache import ReportCache, report_key
from service.views.report.inputs import load_report_inputs
from storage.db import FINAL_STATUSES
from storage.runs import get_run


def stored_run_report(sessions: sessionmaker[Session], run_id: int, cache: ReportCache) -> str:
    """The HTML report of a final run; raise :class:`RunNotFinishedError` for an unfinished
    one and ``NotFoundError`` for an unknown one."""
    with sessions.begin() as session:
        run = get_run(session, run_id)
    if run.status not in FINAL_STATUSES:
        raise RunNotFinishedError(f"run {run_id} is {run.status}; its report is ready once "
                                  "the run has finished")
    key = report_key(run)
    cached = cache.get(key)
    if cached is not None:
        return cached
    with DRAWING:
        cached = cache.get(key)
        if cached is not None:
            return cached
        with sessions.begin() as session:
            inputs = load_report_inputs(session, run_id)
        html = render_run_report(inputs.result, inputs.run_meta, inputs.series_values,
                                 overview=inputs.overview)
        cache.put(key, html)
        return html
