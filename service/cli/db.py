"""Command-line subcommands for the store: ``db upgrade``, ``db bi-reader``, ``audit verify``
and ``audit checkpoint``.

:func:`register` adds them to the main parser's subparsers; each sets ``handler`` to a
function ``handler(args) -> int`` returning the exit code: 0 done, 1 the audit found a
problem, 2 an error (reported on one line of stderr).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from sqlalchemy.engine import make_url

from service.settings import InvalidSettingsError, checked_settings
from service.usecases.audit_trail import CheckpointError, full_verification, signed_head
from service.usecases.store import (
    BI_VIEWS,
    URL_SETTING,
    grant_bi_reader_role,
    migrate_store,
    open_store,
    store_url,
)
from storage.errors import StorageError


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
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
        "verify", help="verify the whole audit log: its hash chain (keyed under "
                       "FOLDLINE_AUDIT_KEY), the content it vouches for, and every record")
    verify_parser.add_argument("--checkpoint", metavar="FILE",
                               help="also prove the store extends this signed checkpoint "
                                    "(needs FOLDLINE_AUDIT_KEY)")
    _add_url_option(verify_parser)
    verify_parser.set_defaults(handler=audit_verify)
    checkpoint_parser = audit_commands.add_parser(
        "checkpoint", help="print the signed head of the audit chain (JSON) to keep elsewhere")
    _add_url_option(checkpoint_parser)
    checkpoint_parser.set_defaults(handler=audit_checkpoint)


def db_upgrade(args: argparse.Namespace) -> int:
    """Apply the migrations to the store; print where."""
    try:
        url = migrate_store(args.database_url)
    except StorageError as exc:
        return _error(exc)
    print(f"database {_shown(url)} is at the latest schema")
    return 0


def db_bi_reader(args: argparse.Namespace) -> int:
    """Grant a role SELECT on the BI views (PostgreSQL); print what was done."""
    url = store_url(args.database_url)
    try:
        with open_store(url) as sessions:
            created = grant_bi_reader_role(sessions, args.role)
    except StorageError as exc:
        return _error(exc)
    done = "created without login; it" if created else "already existed; it"
    print(f"role {args.role} {done} may read {', '.join(BI_VIEWS)} in {_shown(url)} and "
          "nothing else")
    return 0


def audit_verify(args: argparse.Namespace) -> int:
    """Verify the whole audit log (the full pass); print OK and the events checked, or the
    first broken link. Keyed event hashes are checked under ``FOLDLINE_AUDIT_KEY``. With
    ``--checkpoint``, the store must also still hold the checkpoint's head."""
    try:
        text = key = None
        if args.checkpoint is not None:
            text, key = Path(args.checkpoint).read_text(), _audit_key()
        with open_store(args.database_url) as sessions:
            report, cut = full_verification(sessions, text, key)
    except (StorageError, CheckpointError, OSError, InvalidSettingsError) as exc:
        return _error(exc)
    if cut is not None:
        print(f"BROKEN against the checkpoint: {cut}")
        return 1
    if report.ok:
        keyed = "" if report.keyed_from is None else f", keyed from event {report.keyed_from}"
        print(f"OK: {report.events_checked} events checked{keyed}, head {report.head_hash}")
        return 0
    where = f"event {report.broken_at}" if report.broken_at is not None else "stored records"
    print(f"BROKEN at {where}: {report.problem} "
          f"({report.events_checked} events verified before it)")
    return 1


def audit_checkpoint(args: argparse.Namespace) -> int:
    """Print the signed head of the chain as one line of JSON."""
    try:
        key = _audit_key()
        with open_store(args.database_url) as sessions:
            checkpoint = signed_head(sessions, key)
    except (StorageError, InvalidSettingsError) as exc:
        return _error(exc)
    print(checkpoint.to_json())
    return 0


def _audit_key() -> bytes:
    key = checked_settings().audit_key
    if key is None:
        raise InvalidSettingsError("FOLDLINE_AUDIT_KEY is not set: checkpoints are signed "
                                   "with it")
    return key.encode()


def _add_url_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--database-url", metavar="URL",
                        help=f"SQLAlchemy URL of the store (default: ${URL_SETTING}, "
                             "else the SQLite file in $XDG_DATA_HOME/foldline)")


def _error(exc: Exception) -> int:
    message = " ".join(str(exc).split())
    print(f"foldline: error: {message}", file=sys.stderr)
    return 2


def _shown(url: str) -> str:
    return make_url(url).render_as_string(hide_password=True)
