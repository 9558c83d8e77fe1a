"""``foldline keys``: create, list and revoke API keys, straight in the store.

This is how the first admin key comes to exist; later keys can also be made over HTTP by an
admin. ``keys create`` prints the new key on stdout (alone, so scripts can capture it) and
a reminder on stderr: the key is shown this once, only its hash is stored. Exit codes: 0
done, 2 an error (one line on stderr).
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable

from sqlalchemy.orm import Session, sessionmaker

from service.cli.store import operator
from service.errors import ServiceError
from service.settings import InvalidSettingsError
from service.usecases.keys import ROLES, all_keys, create_api_key, revoke_api_key
from service.usecases.store import URL_SETTING, open_store
from storage.errors import StorageError

Output = tuple[str, str | None]
"""What a command prints: stdout text, and a note for stderr."""


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
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
    def create(sessions: sessionmaker[Session]) -> Output:
        key, token = create_api_key(sessions, name=args.name, role=args.role,
                                    actor=operator(), scope=args.scope)
        return token.text, (f"created key {key.id} for {key.name} ({key.role}, "
                            f"{_scope_text(key.scope)}); store it now: it is not shown again")
    return _in_store(args, create)


def keys_list(args: argparse.Namespace) -> int:
    """Print every key: id, role, name, scope, created, state."""
    def show(sessions: sessionmaker[Session]) -> Output:
        lines = []
        for key in all_keys(sessions):
            state = "active" if key.active else f"revoked {key.revoked_at:%Y-%m-%d %H:%M}Z"
            lines.append(f"{key.id}  {key.role:<9}  {key.name}  {_scope_text(key.scope)}  "
                         f"created {key.created_at:%Y-%m-%d} by {key.created_by}  {state}")
        return "\n".join(lines), None
    return _in_store(args, show)


def keys_revoke(args: argparse.Namespace) -> int:
    """Revoke a key."""
    def revoke(sessions: sessionmaker[Session]) -> Output:
        key = revoke_api_key(sessions, args.key_id, actor=operator())
        return f"key {key.id} of {key.name} is revoked", None
    return _in_store(args, revoke)


def _in_store(args: argparse.Namespace, work: Callable[[sessionmaker[Session]], Output]) -> int:
    """Run ``work`` on the store; print its output only once its transaction is committed."""
    try:
        with open_store(args.database_url) as sessions:
            out, note = work(sessions)
    except (StorageError, ServiceError, InvalidSettingsError) as exc:
        print(f"foldline: error: {' '.join(str(exc).split())}", file=sys.stderr)
        return 2
    if out:
        print(out)
    if note:
        print(note, file=sys.stderr)
    return 0


def _scope_text(scope: str | None) -> str:
    return f"scope {scope}" if scope else "global"
