"""``foldline champion``, ``forecast`` and ``monitor`` on a real SQLite store."""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest

from backtest.candidates import parse_candidate
from backtest.series import make_series
from service.cli.main import main
from service.usecases.score_outcomes import score_due_outcomes
from storage.db import make_engine, session_factory
from storage.series import save_series_version
from tests.service.conftest import copied_store
from tests.storage.builders import ACTOR, monthly_series, run_and_store

SERIES = monthly_series("north", 40, seed=8)
NAIVE = parse_candidate({"family": "benchmark", "method": "naive"}).id
DRIFT = parse_candidate({"family": "benchmark", "method": "drift"}).id


@pytest.fixture
def store(sqlite_template: Path, tmp_path: Path) -> str:
    """A store holding the series and a succeeded run 1 of the naive and drift benchmarks."""
    url = copied_store(sqlite_template, tmp_path)
    engine = make_engine(url)
    with session_factory(engine).begin() as session:
        run_and_store(session, [SERIES])
    engine.dispose()
    return url


def _foldline(capsys: pytest.CaptureFixture, url: str, *args: str) -> tuple[int, str, str]:
    code = main([*args, "--database-url", url])
    out, err = capsys.readouterr()
    return code, out, err


def _append_actuals(url: str, *values: float) -> int:
    """Append actuals as a new version and score what they made due, as a worker does."""
    labels = [SERIES.label(len(SERIES) + i) for i in range(len(values))]
    later = make_series(SERIES.key, "P1M", [*zip(SERIES.labels(), SERIES.values.tolist()),
                                            *zip(labels, values)])
    engine = make_engine(url)
    sessions = session_factory(engine)
    with sessions.begin() as session:
        save_series_version(session, later, actor=ACTOR)
    scored = score_due_outcomes(sessions, actor="worker-test")
    engine.dispose()
    return scored


def test_champion_commands_choose_show_and_keep_history(capsys, store):
    first = _foldline(capsys, store, "champion", "set", "north", "--candidate", NAIVE,
                      "--run", "1", "--reason", "simplest")
    second = _foldline(capsys, store, "champion", "set", "north", "--candidate", DRIFT,
                       "--run", "1", "--reason", "trend")
    shown = _foldline(capsys, store, "champion", "show", "north")
    history = _foldline(capsys, store, "champion", "history", "north")
    suggested = _foldline(capsys, store, "champion", "suggest", "1")

    assert first[0] == second[0] == shown[0] == history[0] == suggested[0] == 0
    assert DRIFT in shown[1] and "trend" in shown[1] and NAIVE not in shown[1]
    lines = history[1].splitlines()
    assert len(lines) == 2 and NAIVE in lines[0] and DRIFT in lines[1]
    assert "cli:" in lines[0]
    assert suggested[1].startswith("north  c") and f"champion now: {DRIFT}" in suggested[1]


def test_forecast_commands_issue_once_list_and_show_outcomes(capsys, store):
    _foldline(capsys, store, "champion", "set", "north", "--candidate", NAIVE, "--run", "1",
              "--reason", "simplest")
    issued = _foldline(capsys, store, "forecast", "issue", "north", "--horizon", "3")
    again = _foldline(capsys, store, "forecast", "issue", "north", "--horizon", "3")
    listed = _foldline(capsys, store, "forecast", "list", "--csv", "--horizon", "2")
    before = _foldline(capsys, store, "forecast", "outcomes", "1")
    assert _append_actuals(store, 150.0) == 1
    after = _foldline(capsys, store, "forecast", "outcomes", "1", "--csv")

    assert issued[0] == again[0] == listed[0] == before[0] == after[0] == 0
    assert issued[1].startswith("forecast 1: north v1 by Naive")
    assert again[1].startswith("identical inputs were issued before: forecast 1:")
    rows = list(csv.DictReader(io.StringIO(listed[1])))
    assert [(r["forecast_id"], r["horizon"], r["level"]) for r in rows] == [
        ("1", "2", "80"), ("1", "2", "95")]
    assert "no outcomes yet" in before[1]
    scored = list(csv.DictReader(io.StringIO(after[1])))
    naive = float(SERIES.values[-1])
    assert [(r["period"], float(r["actual"])) for r in scored] == [(SERIES.label(40), 150.0)] * 2
    assert float(scored[0]["error"]) == pytest.approx(150.0 - naive)


def test_monitor_reports_the_champion_and_its_flags(capsys, store):
    _foldline(capsys, store, "champion", "set", "north", "--candidate", NAIVE, "--run", "1",
              "--reason", "simplest")
    _foldline(capsys, store, "forecast", "issue", "north", "--horizon", "2")
    _append_actuals(store, 150.0, 151.0)
    detail = _foldline(capsys, store, "monitor", "north")
    every = _foldline(capsys, store, "monitor")
    as_json = _foldline(capsys, store, "monitor", "north", "--json")

    assert detail[0] == every[0] == as_json[0] == 0
    assert detail[1].startswith(f"north: champion {NAIVE}, 1 issued forecast(s)")
    assert "backtest (run 1) MASE by horizon" in detail[1]
    assert "level_shift" in every[1] and "accuracy" in every[1]
    report = json.loads(as_json[1])
    assert [p["period"] for p in report["realised"]] == [SERIES.label(40), SERIES.label(41)]


@pytest.mark.parametrize(("args", "message"), [
    (("forecast", "issue", "north", "--horizon", "3"), "has no champion"),
    (("forecast", "issue", "south", "--horizon", "3", "--candidate", NAIVE), "'south'"),
    (("forecast", "issue", "north", "--horizon", "3", "--candidate", NAIVE,
      "--levels", "80,80"), "repeat"),
    (("forecast", "outcomes", "9"), "issued forecast 9 does not exist"),
    (("champion", "set", "north", "--candidate", NAIVE, "--run", "7", "--reason", "x"),
     "run 7 does not exist"),
    (("champion", "show", "south"), "series 'south' does not exist"),
    (("monitor", "north"), "has no champion"),
    (("monitor", "--candidate", NAIVE), "--candidate needs a SERIES"),
])
def test_bad_requests_fail_with_one_line_and_exit_2(capsys, store, args, message):
    code, out, err = _foldline(capsys, store, *args)

    assert code == 2 and out == ""
    assert message in err and len(err.strip().splitlines()) == 1
    assert err.startswith("foldline: error: ")
