"""``db upgrade`` and ``audit verify`` from the command line, on real stores."""

from __future__ import annotations

import argparse
from pathlib import Path

import pytest
from sqlalchemy import inspect, text

from service.cli.db import register
from storage.db import URL_SETTING, make_engine, session_factory
from tests.storage.builders import monthly_series, run_and_store


def _run(*argv: str) -> int:
    parser = argparse.ArgumentParser(prog="foldline")
    register(parser.add_subparsers(dest="command", required=True))
    args = parser.parse_args(argv)
    return args.handler(args)


def _tamper(url: str) -> None:
    engine = make_engine(url)
    with session_factory(engine).begin() as session:
        if session.get_bind().dialect.name == "postgresql":
            session.execute(text("DROP TRIGGER score_append_only ON score"))
        else:
            session.execute(text("DROP TRIGGER score_no_update"))
        session.execute(text("UPDATE score SET value = value + 1 WHERE metric = 'mae'"))
    engine.dispose()


def test_upgrade_creates_the_schema_at_the_setting_url(tmp_path: Path,
                                                       monkeypatch: pytest.MonkeyPatch,
                                                       capsys: pytest.CaptureFixture[str]):
    url = f"sqlite:///{tmp_path}/cli.db"
    monkeypatch.setenv(URL_SETTING, url)

    assert _run("db", "upgrade") == 0

    engine = make_engine(url)
    assert {"run", "forecast", "audit_event"} <= set(inspect(engine).get_table_names())
    engine.dispose()
    assert "latest schema" in capsys.readouterr().out


def test_verify_reports_ok_then_the_first_broken_link(fresh_url: str,
                                                      capsys: pytest.CaptureFixture[str]):
    engine = make_engine(fresh_url)
    with session_factory(engine).begin() as session:
        run_id, versions, _ = run_and_store(session, [monthly_series("sales/north")])
    engine.dispose()

    assert _run("audit", "verify", "--database-url", fresh_url) == 0
    assert capsys.readouterr().out.startswith("OK: ")
    _tamper(fresh_url)
    assert _run("audit", "verify", "--database-url", fresh_url) == 1
    out = capsys.readouterr().out
    assert out.startswith("BROKEN at event ")
    assert f"series_result/{run_id}/{versions[0]}" in out


def test_errors_are_one_line_and_exit_two(tmp_path: Path, capsys: pytest.CaptureFixture[str]):
    assert _run("db", "upgrade", "--database-url", "not a url") == 2
    assert _run("audit", "verify", "--database-url", f"sqlite:///{tmp_path}/empty.db") == 2

    err = capsys.readouterr().err.splitlines()
    assert len(err) == 2 and all(line.startswith("foldline: error: ") for line in err)
