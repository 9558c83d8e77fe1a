"""The ``foldline report RUN_ID -o FILE`` command: a stored run's HTML report, written to a file.

:func:`register` adds it to the main parser's subparsers; its handler returns 0 when the
report is written and 2 on an error (reported on one line of stderr).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from service.errors import ServiceError
from service.settings import InvalidSettingsError, checked_settings
from service.usecases.store import URL_SETTING, open_store, store_url
from service.views.report.cache import ReportCache, cache_directory
from service.views.report.stored import stored_run_report
from storage.errors import StorageError


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``report`` command."""
    parser = subparsers.add_parser("report", help="write a stored run's HTML report")
    parser.add_argument("run_id", type=int, metavar="RUN_ID", help="the run's number")
    parser.add_argument("-o", "--output", required=True, metavar="FILE",
                        help="HTML file to write (self-contained; prints on A4)")
    parser.add_argument("--database-url", metavar="URL",
                        help=f"SQLAlchemy URL of the store (default: ${URL_SETTING}, "
                             "else the SQLite file in $XDG_DATA_HOME/foldline)")
    parser.set_defaults(handler=write_report)


def write_report(args: argparse.Namespace) -> int:
    """Write the run's report to ``args.output``: from the report cache, else rendered and
    cached (the same cache the server uses, ``FOLDLINE_REPORT_CACHE_DIR``)."""
    url = store_url(args.database_url)
    try:
        cache = ReportCache(cache_directory(checked_settings().report_cache_dir, url))
        with open_store(url) as sessions:
            html = stored_run_report(sessions, args.run_id, cache)
    except (StorageError, ServiceError, InvalidSettingsError) as exc:
        return _error(" ".join(str(exc).split()))
    try:
        Path(args.output).write_text(html, encoding="utf-8")
    except OSError as exc:
        return _error(f"report file {args.output}: {exc.strerror}")
    print(f"report of run {args.run_id} written to {args.output}")
    return 0


def _error(message: str) -> int:
    print(f"foldline: error: {message}", file=sys.stderr)
    return 2
