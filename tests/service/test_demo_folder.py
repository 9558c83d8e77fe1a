"""``foldline demo --out DIR`` never deletes or overwrites what it did not write: a store's
folder is refused, and a folder the demo made gets a new numbered subfolder per run."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from service.demo.run import MARKER, OutputFolderError, demo_folder
from service.usecases.keys import issue_key
from storage.db import make_engine, session_factory
from tests.storage.conftest import migrated_store


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def test_the_demo_refuses_a_real_stores_folder_and_leaves_it_as_it_was(tmp_path: Path):
    folder = tmp_path / "foldline-data"
    folder.mkdir()
    with migrated_store("sqlite", folder) as url:
        engine = make_engine(url)
        with session_factory(engine).begin() as session:
            issue_key(session, name="planning", role="submitter", actor="setup")
        engine.dispose()
    before = _snapshot(folder)
    assert "foldline.db" in before

    done = subprocess.run([sys.executable, "-m", "service.cli.main", "demo", "--out", str(folder)],
                          capture_output=True, text=True, timeout=60)

    assert done.returncode == 2, done.stdout
    assert done.stderr.strip().splitlines() == [
        f"foldline: error: {folder} is not empty and was not made by foldline demo (no "
        f"{MARKER} file); give --out a new or empty folder"]
    assert _snapshot(folder) == before


def test_any_non_empty_folder_without_the_marker_is_refused_untouched(tmp_path: Path):
    (tmp_path / "notes.txt").write_text("mine")

    with pytest.raises(OutputFolderError, match="is not empty"):
        demo_folder(tmp_path)
    assert _snapshot(tmp_path) == {"notes.txt": b"mine"}


def test_a_file_given_as_the_folder_is_refused(tmp_path: Path):
    (tmp_path / "taken").write_text("x")

    with pytest.raises(OutputFolderError, match="taken"):
        demo_folder(tmp_path / "taken")


def test_each_run_gets_a_new_subfolder_and_earlier_runs_stay_as_they_were(tmp_path: Path):
    out = tmp_path / "demo"
    first = demo_folder(out)
    (first / "foldline.db").write_bytes(b"first run's store")
    (first / "report.html").write_text("first run's report")
    before = _snapshot(first)

    second = demo_folder(out)
    third = demo_folder(out)

    assert (first.name, second.name, third.name) == ("1", "2", "3")
    assert (out / MARKER).is_file() and not any(second.iterdir())
    assert _snapshot(first) == before
