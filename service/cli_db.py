"""Command-line subcommands for the store: ``db upgrade``, ``db bi-reader`` and ``audit verify``.

:func:`register` adds them to the main parser's subparsers; each sets ``handler`` to a
function ``handler(args) -> int`` returning the exit code: 0 done, 1 the audit found a
problem, 2 an error (reported on one line of stderr).
"""

from __future__ import annotations

import argparse
import sys

from sqlalchemy.engine import make_url

from storage.bi_views import BI_VIEWS, grant_bi_reader
from storage.engine import URL_SETTING, database_url, make_engine, session_factory
from storage.errors import StorageError
from storage.migrate import upgrade
from storage.verify import verify_audit_log


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``db`` and ``audit`` command groups."""
    db = subparsers.add_parser("db", help="manage the Foldline database")
    db_commands = db.add_subparsers(dest="db_command", required=True, metavar="COMMAND")
    upgrade_parser = db_commands.add_parser("upgrade", help="apply the schema migrations")
    _add_url_option(upgrade_parser)
    upgrade_parser.set_defaults(handler=db_upgrade)
    reader_parser = db_commands.add_parser(
        "bi-reader", help="let a PostgreSQL role read the BI views and nothing else")
    reader_parser.add_argument("role", metavar="ROLE", help="created without login if missing")
    _add_url_option(reader_parser)
    reader_parser.set_defaults(handler=db_bi_reader)

    audit = subparsers.add_parser("audit", help="check the audit trail")
    audit_commands = audit.add_subparsers(dest="audit_command", required=True,
                                          metavar="COMMAND")
    verify_parser = audit_commands.add_parser(
        "verify", help="verify the audit log's hash chain and the content it vouches for")
    _add_url_option(verify_parser)
    verify_parser.set_defaults(handler=audit_verify)


def db_upgrade(args: argparse.Namespace) -> int:
    """Apply the migrations to the store; print where."""
    url = args.database_url or database_url()
    try:
        upgrade(url)
    except StorageError as exc:
        return _error(exc)
    print(f"database {_shown(url)} is at the latest schema")
    return 0


def db_bi_reader(args: argparse.Namespace) -> int:
    """Grant a role SELECT on the BI views (PostgreSQL); print what was done."""
    url = args.database_url or database_url()
    try:
        engine = make_engine(url)
        try:
            with session_factory(engine).begin() as session:
                created = grant_bi_reader(session, args.role)
        finally:
            engine.dispose()
    except StorageError as exc:
        return _error(exc)
    done = "created without login; it" if created else "already existed; it"
    print(f"role {args.role} {done} may read {', '.join(BI_VIEWS)} in {_shown(url)} and "
          "nothing else")
    return 0


def audit_verify(args: argparse.Namespace) -> int:
    """Verify the audit log; print OK and the events checked, or the first broken link."""
    url = args.database_url or database_url()
    try:
        engine = make_engine(url)
        try:
            with session_factory(engine).begin() as session:
                report = verify_audit_log(session)
        finally:
            engine.dispose()
    except StorageError as exc:
        return _error(exc)
    if report.ok:
        print(f"OK: {report.events_checked} events checked, head {report.head_hash}")
        return 0
    where = f"event {report.broken_at}" if report.broken_at is not None else "stored records"
    print(f"BROKEN at {where}: {report.problem} "
          f"({report.events_checked} events verified before it)")
    return 1


def _add_url_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--database-url", metavar="URL",
                        help=f"SQLAlchemy URL of the store (default: ${URL_SETTING}, "
                             "else the SQLite file in $XDG_DATA_HOME/foldline)")


def _error(exc: StorageError) -> int:
    message = " ".join(str(exc).split())
    print(f"foldline: error: {message}", file=sys.stderr)
    return 2


def _shown(url: str) -> str:
    return make_url(url).render_as_string(hide_password=True)
