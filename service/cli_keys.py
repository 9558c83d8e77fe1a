"""``foldline keys``: create, list and revoke API keys, straight in the store.

This is how the first admin key comes to exist; later keys can also be made over HTTP by an
admin. ``keys create`` prints the new key on stdout (alone, so scripts can capture it) and
a reminder on stderr: the key is shown this once, only its hash is stored. Exit codes: 0
done, 2 an error (one line on stderr).
"""

from __future__ import annotations

import argparse
import getpass
import sys
from collections.abc import Callable

from sqlalchemy.orm import Session

from service.errors import ServiceError
from service.key_admin import issue_key
from storage.engine import URL_SETTING, database_url, make_engine, session_factory
from storage.errors import StorageError
from storage.keys import list_keys, revoke_key
from storage.schema import ROLES

Output = tuple[str, str | None]
"""What a command prints: stdout text, and a note for stderr."""


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``keys`` command group."""
    keys = subparsers.add_parser("keys", help="manage API keys")
    commands = keys.add_subparsers(dest="keys_command", required=True, metavar="COMMAND")
    create = commands.add_parser("create", help="create a key and print it (shown once)")
    create.add_argument("--role", required=True, choices=ROLES, help="what the key may do")
    create.add_argument("--name", required=True,
                        help="who holds it; names the actor in the audit log, never reused")
    create.add_argument("--scope", metavar="PREFIX",
                        help="submitter keys only: the series-key prefix the key's team owns "
                        "(e.g. sales/north/); it writes only series under it. Default: global")
    create.set_defaults(handler=keys_create)
    listing = commands.add_parser("list", help="list keys, revoked ones included")
    listing.set_defaults(handler=keys_list)
    revoke = commands.add_parser("revoke", help="revoke a key by its id")
    revoke.add_argument("key_id", help="the id shown by 'keys list' (fl_<id>.<secret>)")
    revoke.set_defaults(handler=keys_revoke)
    for parser in (create, listing, revoke):
        parser.add_argument("--database-url", metavar="URL",
                            help=f"SQLAlchemy URL of the store (default: ${URL_SETTING})")


def keys_create(args: argparse.Namespace) -> int:
    """Create a key and print its token."""
    def create(session: Session) -> Output:
        key, token = issue_key(session, name=args.name, role=args.role, actor=_operator(),
                               scope=args.scope)
        return token.text, (f"created key {key.id} for {key.name} ({key.role}, "
                            f"{_scope_text(key.scope)}); store it now: it is not shown again")
    return _in_store(args, create)


def keys_list(args: argparse.Namespace) -> int:
    """Print every key: id, role, name, scope, created, state."""
    def show(session: Session) -> Output:
        lines = []
        for key in list_keys(session):
            state = "active" if key.active else f"revoked {key.revoked_at:%Y-%m-%d %H:%M}Z"
            lines.append(f"{key.id}  {key.role:<9}  {key.name}  {_scope_text(key.scope)}  "
                         f"created {key.created_at:%Y-%m-%d} by {key.created_by}  {state}")
        return "\n".join(lines), None
    return _in_store(args, show)


def keys_revoke(args: argparse.Namespace) -> int:
    """Revoke a key."""
    def revoke(session: Session) -> Output:
        key = revoke_key(session, args.key_id, actor=_operator())
        return f"key {key.id} of {key.name} is revoked", None
    return _in_store(args, revoke)


def _in_store(args: argparse.Namespace, work: Callable[[Session], Output]) -> int:
    """Run ``work`` in one transaction; print its output only once that is committed."""
    try:
        engine = make_engine(args.database_url or database_url())
        try:
            with session_factory(engine).begin() as session:
                out, note = work(session)
        finally:
            engine.dispose()
    except (StorageError, ServiceError) as exc:
        print(f"foldline: error: {' '.join(str(exc).split())}", file=sys.stderr)
        return 2
    if out:
        print(out)
    if note:
        print(note, file=sys.stderr)
    return 0


def _scope_text(scope: str | None) -> str:
    return f"scope {scope}" if scope else "global"


def _operator() -> str:
    return f"cli:{getpass.getuser()}"
