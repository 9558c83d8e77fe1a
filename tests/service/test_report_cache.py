"""The report cache: keys that change with what a report depends on, atomic files, and a
cache that cannot be written costing a render, never an error."""

from __future__ import annotations

import dataclasses
import logging
from datetime import UTC, datetime
from pathlib import Path

import pytest

from service.views.report.cache import ReportCache, cache_directory, renderer_digest, report_key
from storage.runs import RunInfo

RUN = RunInfo(id=7, plan_id="p" * 16, seed=0, requested_by="planner", idempotency_key=None,
              status="succeeded", queued_at=datetime(2026, 1, 5, 9, tzinfo=UTC),
              started_at=datetime(2026, 1, 5, 9, 1, tzinfo=UTC),
              finished_at=datetime(2026, 1, 5, 9, 2, tzinfo=UTC), folds_done=12,
              folds_total=12, software={"numpy": "2.0"}, failure_reason=None, attempts=1,
              series_version_ids=(1,), candidate_ids=("c1",))


def test_the_key_names_the_run_and_changes_with_what_the_report_depends_on():
    key = report_key(RUN)

    assert key.startswith("run-7-") and report_key(RUN) == key
    for change in ({"finished_at": datetime(2026, 1, 6, tzinfo=UTC)}, {"status": "failed"},
                   {"plan_id": "q" * 16}, {"id": 8}):
        assert report_key(dataclasses.replace(RUN, **change)) != key, change
    assert len(renderer_digest()) == 64


def test_a_report_is_filed_atomically_and_replaces_older_files_of_its_run(tmp_path: Path):
    cache = ReportCache(tmp_path / "reports")
    assert cache.get("run-7-aaaa") is None

    cache.put("run-7-aaaa", "<p>old</p>")
    cache.put("run-17-cccc", "<p>another run</p>")
    cache.put("run-7-bbbb", "<p>new</p>")

    assert cache.get("run-7-bbbb") == "<p>new</p>" and cache.get("run-7-aaaa") is None
    assert cache.get("run-17-cccc") == "<p>another run</p>"
    assert sorted(p.name for p in (tmp_path / "reports").iterdir()) == [
        "run-17-cccc.html", "run-7-bbbb.html"]


def test_a_cache_that_cannot_be_written_is_logged_and_skipped(tmp_path: Path,
                                                             caplog: pytest.LogCaptureFixture):
    blocked = tmp_path / "not-a-directory"
    blocked.write_text("a file where the cache directory should be")
    cache = ReportCache(blocked)

    with caplog.at_level(logging.WARNING, logger="foldline.report"):
        cache.put("run-7-aaaa", "<p>report</p>")

    assert cache.get("run-7-aaaa") is None
    assert "report run-7-aaaa not cached" in caplog.text


def test_the_cache_lives_beside_a_sqlite_store_unless_configured(tmp_path: Path,
                                                                monkeypatch: pytest.MonkeyPatch):
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "data"))

    assert cache_directory(None, f"sqlite:///{tmp_path / 'store.db'}") == tmp_path / "reports"
    assert cache_directory("/srv/reports", f"sqlite:///{tmp_path / 'store.db'}") == \
        Path("/srv/reports")
    assert cache_directory(None, "postgresql+psycopg://u@db/foldline") == \
        tmp_path / "data" / "foldline" / "reports"
    assert cache_directory(None, "sqlite://") == tmp_path / "data" / "foldline" / "reports"
