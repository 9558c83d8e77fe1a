"""``foldline serve``: the API server, with an embedded job worker by default.

On the embedded default (a SQLite file) the store's migrations are applied at start, so
one command gives a working service; on a shared PostgreSQL store they are applied once by
``foldline db upgrade`` (deploy/LAYOUT.md), or here with ``--migrate``.
"""

from __future__ import annotations

import argparse
import socket
import sys

import uvicorn
from sqlalchemy.engine import make_url

from service.http.app import create_app
from service.settings import InvalidSettingsError, Settings, checked_settings
from service.usecases.store import migrate_store
from service.worker.loop import start_embedded


def register(subparsers: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """Add the ``serve`` command."""
    serve = subparsers.add_parser(
        "serve", help="run the HTTP API (and a job worker unless FOLDLINE_EMBEDDED_WORKER=false)",
        description="Serve the API on FOLDLINE_HOST:FOLDLINE_PORT; settings come from the "
                    "FOLDLINE_* environment variables (see deploy/SETTINGS.md).")
    serve.add_argument("--host", help="override FOLDLINE_HOST")
    serve.add_argument("--port", type=int, help="override FOLDLINE_PORT")
    serve.add_argument("--migrate", action="store_true",
                       help="apply the store's migrations first (always done for SQLite)")
    serve.set_defaults(handler=run_server)


def run_server(args: argparse.Namespace) -> int:
    """Serve until interrupted; exit 2 on invalid settings."""
    try:
        settings = checked_settings()
    except InvalidSettingsError as exc:
        print(f"foldline: error: {exc}", file=sys.stderr)
        return 2
    updates = {k: v for k, v in (("host", args.host), ("port", args.port)) if v is not None}
    settings = settings.model_copy(update=updates)
    if args.migrate or settings.database_url.startswith("sqlite"):
        migrate_store(settings.database_url)
    return _serve(settings)


class _AnnouncingServer(uvicorn.Server):
    """A uvicorn server that says where it listens once its socket is bound."""

    def __init__(self, config: uvicorn.Config, settings: Settings) -> None:
        super().__init__(config)
        self.settings = settings

    async def startup(self, sockets: list[socket.socket] | None = None) -> None:
        await super().startup(sockets)
        if self.started:
            print(listening_line(self.settings), flush=True)


def listening_line(settings: Settings) -> str:
    """``listening on http://host:port``, the store (password hidden), the docs and pages."""
    base = f"http://{settings.host}:{settings.port}"
    store = make_url(settings.database_url).render_as_string(hide_password=True)
    worker = "with an embedded worker" if settings.embedded_worker else "without a worker"
    return (f"foldline: listening on {base} ({worker}); store {store}; API docs "
            f"{base}/docs; reviewer pages {base}/pages/")


def _serve(settings: Settings) -> int:
    worker = start_embedded(settings) if settings.embedded_worker else None
    try:
        config = uvicorn.Config(create_app(settings), host=settings.host, port=settings.port,
                                log_level="warning")
        _AnnouncingServer(config, settings).run()
    finally:
        if worker is not None:
            thread, stop = worker
            stop.set()
            thread.join(timeout=30)
    return 0
