"""Running a command-line command against the store: one engine, one-line errors.

Commands that work on the store directly (champions, forecasts, monitoring) share this:
they get a session factory, return what to print, and any storage, service, backtest or
settings error ends as ``foldline: error: ...`` on stderr with exit code 2.
"""

from __future__ import annotations

import argparse
import getpass
import sys
from collections.abc import Callable

from sqlalchemy.orm import Session, sessionmaker

from backtest.errors import BacktestError
from service.errors import ServiceError
from service.settings import InvalidSettingsError
from service.usecases.store import URL_SETTING, open_store
from storage.errors import StorageError


def add_store_option(parser: argparse.ArgumentParser) -> None:
    """Add ``--database-url`` to a command."""
    parser.add_argument("--database-url", metavar="URL",
                        help=f"SQLAlchemy URL of the store (default: ${URL_SETTING})")


def run_in_store(args: argparse.Namespace,
                 work: Callable[[sessionmaker[Session]], str]) -> int:
    """Print what ``work`` returns (0), or its error on one line of stderr (2)."""
    try:
        with open_store(args.database_url) as sessions:
            out = work(sessions)
    except (StorageError, ServiceError, BacktestError, InvalidSettingsError) as exc:
        print(f"foldline: error: {' '.join(str(exc).split())}", file=sys.stderr)
        return 2
    if out:
        print(out)
    return 0


def operator() -> str:
    """The actor named in the audit log for commands run by hand."""
    return f"cli:{getpass.getuser()}"
