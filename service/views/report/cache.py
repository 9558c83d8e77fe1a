"""Rendered reports kept as files: a final run never changes, so its report is rendered once.

A report is filed under its run id and a digest of everything it depends on besides the
store: the run's identity (finish time, plan), the source of the report and chart code, and
the versions of the libraries that draw and refit. A new Foldline or library version
therefore renders afresh; older files of the same run are removed when the new one is
written. Files are written to a temporary name and renamed, so a reader never sees half a
report, and two processes rendering the same run at once both leave a whole file.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import logging
import os
import tempfile
from functools import lru_cache
from importlib import metadata
from pathlib import Path

from sqlalchemy.engine import make_url

from storage.db import default_sqlite_path
from storage.runs import RunInfo

log = logging.getLogger("foldline.report")
_SOURCES = ("report", "charts")
_LIBRARIES = ("foldline", "matplotlib", "numpy", "scipy", "statsmodels")


def cache_directory(configured: str | None, database_url: str) -> Path:
    """Where reports are kept: ``configured`` if given, else ``reports/`` beside a SQLite
    store, else ``reports/`` in the default data directory."""
    if configured:
        return Path(configured)
    url = make_url(database_url)
    if url.get_backend_name() == "sqlite" and url.database not in (None, "", ":memory:"):
        return Path(url.database).parent / "reports"
    return default_sqlite_path().parent / "reports"


@lru_cache(maxsize=1)
def renderer_digest() -> str:
    """SHA-256 of the report and chart sources and the versions of the libraries used."""
    digest = hashlib.sha256()
    service = Path(__file__).resolve().parents[1]
    for package in _SOURCES:
        for source in sorted((service / package).glob("*.py")):
            digest.update(f"{package}/{source.name}\n".encode())
            digest.update(source.read_bytes())
    for library in _LIBRARIES:
        digest.update(f"{library} {metadata.version(library)}\n".encode())
    return digest.hexdigest()


def report_key(run: RunInfo) -> str:
    """The cache key of a final run's report."""
    facts = {"run": run.id, "finished": run.finished_at.isoformat() if run.finished_at else None,
             "status": run.status, "plan": run.plan_id, "renderer": renderer_digest()}
    digest = hashlib.sha256(json.dumps(facts, sort_keys=True).encode()).hexdigest()
    return f"run-{run.id}-{digest[:20]}"


class ReportCache:
    """Report files in one directory, named by :func:`report_key`."""

    def __init__(self, directory: Path) -> None:
        self.directory = directory

    def path(self, key: str) -> Path:
        """The file of the report with this key."""
        return self.directory / f"{key}.html"

    def get(self, key: str) -> str | None:
        """The cached report, or ``None`` (also when the cache cannot be read)."""
        try:
            return self.path(key).read_text(encoding="utf-8")
        except OSError:
            return None

    def put(self, key: str, html: str) -> None:
        """File a report atomically; a cache that cannot be written is logged, not fatal."""
        try:
            self.directory.mkdir(parents=True, exist_ok=True)
            handle, temporary = tempfile.mkstemp(dir=self.directory, prefix=f".{key}.",
                                                 suffix=".tmp")
            try:
                with os.fdopen(handle, "w", encoding="utf-8") as out:
                    out.write(html)
                os.replace(temporary, self.path(key))
            except OSError:
                with contextlib.suppress(OSError):
                    os.unlink(temporary)
                raise
        except OSError as exc:
            log.warning("report %s not cached in %s: %s", key, self.directory, exc.strerror)
            return
        self._remove_older(key)

    def _remove_older(self, key: str) -> None:
        run_prefix = key.rsplit("-", 1)[0] + "-"
        for older in self.directory.glob(f"{run_prefix}*.html"):
            if older.name != self.path(key).name:
                with contextlib.suppress(OSError):
                    older.unlink()
