"""``foldline worker``: a standalone job worker reading the ``FOLDLINE_*`` settings.

It runs until SIGTERM or SIGINT. The first signal stops it at the next task of the current
run, which is handed back for another worker to resume; a second one ends it at once (the
run's lease then runs out and another worker resumes it after ``lease_seconds``).
"""

from __future__ import annotations

import argparse
import logging
import signal
import sys
import threading
from types import FrameType

from service.settings import InvalidSettingsError, checked_settings
from service.worker.loop import Worker
from storage.errors import StorageError

log = logging.getLogger("foldline.worker")


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``worker`` command."""
    worker = subparsers.add_parser(
        "worker", help="claim queued runs from the store and compute them",
        description="Run a job worker until SIGTERM/SIGINT; settings come from the "
                    "FOLDLINE_* environment variables (see deploy/SETTINGS.md).")
    worker.set_defaults(handler=run_worker)


def run_worker(_args: argparse.Namespace) -> int:
    """Run a worker until a stop signal; 2 if the settings or the database URL are invalid."""
    try:
        settings = checked_settings()
    except InvalidSettingsError as exc:
        print(f"foldline: error: {exc}", file=sys.stderr)
        return 2
    logging.basicConfig(level=logging.INFO, stream=sys.stderr,
                        format="%(asctime)s %(name)s %(levelname)s %(message)s")
    try:
        worker = Worker(settings)
    except StorageError as exc:
        print(f"foldline: error: {exc}", file=sys.stderr)
        return 2
    stop = threading.Event()
    _stop_on_signals(stop)
    try:
        worker.run_forever(stop)
    finally:
        worker.close()
    return 0


def _stop_on_signals(stop: threading.Event) -> None:
    def handle(signum: int, _frame: FrameType | None) -> None:
        log.info("%s: stopping at the next task; send it again to stop at once",
                 signal.Signals(signum).name)
        stop.set()
        signal.signal(signal.SIGTERM, signal.SIG_DFL)
        signal.signal(signal.SIGINT, signal.default_int_handler)

    signal.signal(signal.SIGTERM, handle)
    signal.signal(signal.SIGINT, handle)
