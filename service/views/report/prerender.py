"""Rendering a succeeded run's report ahead of its first reader.

A worker that has just finished a run renders the run's report into the report cache, so
the first request for it (API, reviewer page or ``foldline report``) is served from the
file instead of waiting for a render. A report details at most
:data:`~service.views.report.inputs.DETAILED_SERIES` series, so this holds the worker from its
next run for about a minute at most. ``FOLDLINE_PRERENDER_REPORTS=false`` turns it off,
which is right where the workers do not share the API servers'
``FOLDLINE_REPORT_CACHE_DIR``.
"""

from __future__ import annotations

import logging
import time

from sqlalchemy.orm import Session, sessionmaker

from service.settings import Settings
from service.views.report.cache import ReportCache, cache_directory
from service.views.report.stored import stored_run_report
from storage.runs import get_run

log = logging.getLogger("foldline.worker")


def settings_report_cache(settings: Settings) -> ReportCache:
    """The report cache the settings name."""
    return ReportCache(cache_directory(settings.report_cache_dir, settings.database_url))


def prerender_report(sessions: sessionmaker[Session], run_id: int, settings: Settings) -> bool:
    """Render and file the report of succeeded run ``run_id`` unless the settings turn this
    off; return whether it is now in the cache. A failure to render is logged, never
    raised: the report is then rendered on its first request as before."""
    with sessions.begin() as session:
        run = get_run(session, run_id)
    if run.status != "succeeded" or not settings.prerender_reports:
        return False
    started = time.perf_counter()
    try:
        stored_run_report(sessions, run_id, settings_report_cache(settings))
    except Exception:
        log.exception("the report of run %s could not be rendered ahead", run_id)
        return False
    log.info("report of run %s rendered ahead in %.1f s", run_id, time.perf_counter() - started)
    return True
