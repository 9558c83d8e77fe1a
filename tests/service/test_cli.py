"""The ``foldline`` command line, run as a real process."""

import csv
import json
import subprocess
import sys
from pathlib import Path

import pytest

from backtest.demo import demo_series
from tests.conftest import BRACKETED_LABEL

FOLDLINE = [sys.executable, "-m", "service.cli.main"]


def _run(*args, cwd=None):
    return subprocess.run([*FOLDLINE, *args], capture_output=True, text=True, cwd=cwd,
                          timeout=300)


@pytest.fixture()
def inputs(tmp_path: Path):
    lines = ["series_key,period,value,frequency"]
    for s in demo_series()[:2]:
        lines += [f"{s.key},{p},{v},P1M" for p, v in zip(s.labels(), s.values)]
    (tmp_path / "series.csv").write_text("\n".join(lines) + "\n")
    (tmp_path / "candidates.json").write_text(json.dumps([
        {"family": "benchmark", "method": "naive"}, {"family": "theta"}]))
    (tmp_path / "plan.json").write_text(json.dumps({"horizon": 3, "max_origins": 4}))
    return tmp_path


def test_backtest_prints_rankings_and_writes_tidy_tables(inputs):
    out = inputs / "out"
    done = _run("backtest", str(inputs / "series.csv"), "--candidates",
                str(inputs / "candidates.json"), "--plan", str(inputs / "plan.json"),
                "--out", str(out))
    assert done.returncode == 0, done.stderr
    assert "sales/fresh-produce" in done.stdout and "Theta, season 12 if tested" in done.stdout
    with (out / "folds.csv").open() as handle:
        folds = list(csv.DictReader(handle))
    assert len(folds) == 2 * 3 * 4 * 3 * 2  # series x candidates x origins x h x levels
    assert {"level", "lower", "upper", "actual", "point"} <= set(folds[0])
    with (out / "scores.csv").open() as handle:
        scores = list(csv.DictReader(handle))
    assert {r["metric"] for r in scores} >= {"mase", "rmsse", "smape", "coverage", "msis"}
    body = json.loads((out / "result.json").read_text())
    assert len(body["series"]) == 2


def test_json_flag_prints_the_whole_result(inputs):
    done = _run("backtest", str(inputs / "series.csv"), "--candidates",
                str(inputs / "candidates.json"), "--plan", str(inputs / "plan.json"), "--json")
    assert done.returncode == 0, done.stderr
    body = json.loads(done.stdout)
    assert body["plan"]["horizon"] == 3 and body["software"]["statsmodels"]


@pytest.mark.parametrize(("series_csv", "message"), [
    ("series_key,period,value\nx,2020-01,1\n", "no frequency"),
    ("series_key,period,value,frequency\nx,2020-01,1,P1M\nx,2020-02,oops,P1M\n",
     "line 3: value 'oops' is not a number"),
    ("key,period,value\n", "line 1: missing column(s) series_key"),
    ("series_key,period,value,frequency\nx,2020-01,1,P1M\nx,2020-01,2,P1M\n",
     "period '2020-01' appears twice"),
])
def test_bad_series_files_fail_with_one_line_and_exit_2(inputs, series_csv, message):
    (inputs / "bad.csv").write_text(series_csv)
    done = _run("backtest", str(inputs / "bad.csv"), "--candidates",
                str(inputs / "candidates.json"), "--plan", str(inputs / "plan.json"))
    assert done.returncode == 2
    assert message in done.stderr
    assert len(done.stderr.strip().splitlines()) == 1 and "Traceback" not in done.stderr


@pytest.mark.parametrize(("name", "text", "message"), [
    ("candidates.json", "[{\"family\": \"arima\", \"order\": [1, 1, 0], "
     "\"deterministic\": \"constant\"}]", "candidate 1: arima: a constant needs d + D = 0"),
    ("candidates.json", "[{", "invalid JSON"),
    ("plan.json", "{\"horizon\": 90}", "the plan needs at least"),
])
def test_bad_specs_fail_with_one_line_and_exit_2(inputs, name, text, message):
    (inputs / name).write_text(text)
    done = _run("backtest", str(inputs / "series.csv"), "--candidates",
                str(inputs / "candidates.json"), "--plan", str(inputs / "plan.json"))
    assert done.returncode == 2
    assert message in done.stderr and len(done.stderr.strip().splitlines()) == 1


def test_demo_runs_and_writes_its_results(tmp_path):
    done = _run("demo", "--out", str(tmp_path / "demo"))
    assert done.returncode == 0, done.stderr
    assert "Tallow & Finch" in done.stdout
    assert "(benchmark)" in done.stdout
    assert (tmp_path / "demo" / ".foldline-demo").is_file()
    assert (tmp_path / "demo" / "1" / "ranking.csv").exists()
    report = (tmp_path / "demo" / "1" / "report.html").resolve()
    assert f"run report (HTML, prints on A4): {report}" in done.stdout
    assert report.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")
    # the demo's continuation shifts one series on purpose; its monitoring must notice
    flagged = [line.split()[0] for line in done.stdout.splitlines() if "RAISED:" in line
               and line.split()[0].count("/") == 1]
    assert flagged == ["costs/cold-storage-energy"]
    # the auditor's question about that line, answered by one request: the dossier
    assert ("the auditor's question, in one request: GET "
            "/v1/series/costs/cold-storage-energy/dossier?target_from=2025-03") in done.stdout
    assert "  champion: " in done.stdout and "  issued forecasts (3):" in done.stdout
    # Foldline's label notation everywhere: no "ARIMA(...)(...)[12]", "Theta[12]", ...
    outputs = {"stdout": done.stdout, **{path.name: path.read_text(encoding="utf-8")
                                         for path in (tmp_path / "demo" / "1").iterdir()
                                         if path.suffix in (".csv", ".html", ".json", ".txt")}}
    assert "Seasonal naive, season 12" in outputs["report.html"]
    assert {name: BRACKETED_LABEL.findall(text) for name, text in outputs.items()
            if BRACKETED_LABEL.search(text)} == {}
