"""The run report: self-contained HTML with the run's provenance, key numbers and charts; and
the ``foldline report`` command on a real store."""

import dataclasses
import re
from html import unescape
from html.parser import HTMLParser

import numpy as np
import pytest

from backtest.assessment.residual_tests import autocorrelations
from backtest.candidates import parse_candidate, parse_candidates
from backtest.demo import DEMO_CANDIDATES, demo_series
from backtest.diagnosis import full_series_diagnostics
from backtest.engine import run_backtest
from backtest.plan import parse_plan
from service.cli.main import build_parser
from service.cli.report import register
from service.views.report import full_fit_residuals, load_report_inputs, render_run_report
from service.views.report.selection import charted_candidates
from storage.db import make_engine, session_factory, upgrade
from tests.storage.builders import monthly_series, run_and_store

AIRLINE = DEMO_CANDIDATES[3]  # log airline model: the Kalman residuals skip 13 periods
META = {"run_id": 7, "status": "succeeded", "requested_by": "planner@example.org",
        "units": {"sales/fresh-produce": "kEUR"}}
VOID = {"meta", "br", "hr", "img", "input", "link", "path", "use", "stop", "rect", "circle",
        "line", "polyline", "polygon", "ellipse"}


@pytest.fixture(scope="module")
def run():
    series = demo_series()[:2]
    plan = parse_plan({"horizon": 3, "max_origins": 4, "seed": 11})
    result = run_backtest(series, parse_candidates([{"family": "theta"}]), plan)
    return result, {s.fingerprint(): s for s in series}


@pytest.fixture(scope="module")
def report(run):
    result, values = run
    return render_run_report(result, META, values)


@pytest.fixture(scope="module")
def troubled(run):
    """The first series only, without its data, with a failed fold and odd warnings."""
    result, _ = run
    sr = result.series[0]
    folds = list(sr.folds)
    folds[1] = dataclasses.replace(folds[1], status="failed", point=None,
                                   reason="LinAlgError: singular matrix")
    folds[2] = dataclasses.replace(folds[2], warnings=("ConvergenceWarning: gave up",
                                                       "<script>alert(1)</script>"))
    broken = dataclasses.replace(sr, folds=tuple(folds))
    return render_run_report(dataclasses.replace(result, series=(broken,)), META)


class _Nesting(HTMLParser):
    """Checks that every opened element is closed, in order."""

    def __init__(self):
        super().__init__()
        self.open, self.problems = [], []

    def handle_starttag(self, tag, attrs):
        if tag not in VOID:
            self.open.append(tag)

    def handle_startendtag(self, tag, attrs):
        pass

    def handle_endtag(self, tag):
        if tag in VOID:
            return
        if not self.open or self.open.pop() != tag:
            self.problems.append(tag)


def test_report_is_one_well_nested_html_document(report):
    assert report.startswith("<!DOCTYPE html>")
    parser = _Nesting()
    parser.feed(report)
    assert parser.problems == [] and parser.open == []
    ids = re.findall(r'\bid="([^"]+)"', report)
    assert ids and len(ids) == len(set(ids))


def test_report_needs_nothing_from_outside(report):
    assert "http://" not in report and "https://" not in report
    assert not re.search(r"<(script|link|img|iframe)\b", report)
    assert not re.search(r'\b(src|href)="(?!#)', report)
    assert "@import" not in report
    assert "@page { size: A4" in report


def test_every_chart_is_embedded(run, report):
    result, _ = run
    for sr in result.series:
        assert all(sr.evidence["diagnostics"][c.candidate_id]["residuals"]["acf"]["acf"]
                   for c in sr.candidates)
    # per series: overview + forecast, then per candidate (theta and the seasonal naive
    # benchmark) a calibration and a residual chart, and parameter paths for theta only
    per_series = 2 + 2 + 2 + 1
    assert report.count("<svg") == report.count("</svg>") == len(result.series) * per_series
    assert report.count("<figcaption>") == len(result.series) * per_series


def _row(report, label):
    """The cells of the ranking table row whose candidate cell is ``label``."""
    found = [cells for cells in _cells(report) if len(cells) == 9 and cells[1] == label]
    if not found:
        raise AssertionError(f"no ranking row for {label}")
    return found[0]


def _cells(html_text):
    """The data cells of every table row in ``html_text``."""
    return [re.findall(r"<td[^>]*>(.*?)</td>", row)
            for row in re.findall(r"<tr>(.*?)</tr>", html_text)]


def test_ranking_rows_show_rank_score_ratio_to_benchmark_and_tests(run, report):
    result, _ = run
    sr = result.series[0]
    section = report[report.index(f"Series {sr.series['key']}"):]
    for r in sr.ranking:
        label = r.label + (" (benchmark)" if r.is_benchmark else "")
        cells = _row(section, label)
        assert cells[0] == str(r.rank)
        assert cells[2] == f"{r.score:.3f}"  # MASE with three decimals
        assert cells[3] == f"{r.score_own_folds:.3f}"
        assert cells[4] == ("–" if r.is_benchmark else f"{r.ratio_to_benchmark:.3f}")
        assert cells[6].startswith("in" if r.in_confidence_set else "out")
        assert cells[7] == r.calibration_zone
        assert cells[8] == f"{r.folds_ok} / {r.folds_failed} / {r.folds_not_converged}"


def test_the_ratio_to_the_benchmark_is_named_for_what_it_is(report):
    assert ">ratio to benchmark</th>" in report
    assert "lower is better, below 1 beats the benchmark" in report
    assert "It is not a skill score, which is 1 minus this ratio (Murphy 1988)" in report
    assert "skill vs benchmark" not in report and "Skill is" not in report


def test_provenance_names_versions_candidates_plan_and_software(run, report):
    result, _ = run
    for sr in result.series:
        assert sr.series["fingerprint"] in report
        for c in sr.candidates:
            assert c.candidate_id in report
    assert "planner@example.org" in report and "kEUR" in report
    assert f"<td>seed</td><td>{result.plan['seed']}</td>" in report
    assert f"<td>statsmodels</td><td>{result.software['statsmodels']}</td>" in report


def test_calibration_verdicts_and_cautions_are_stated(run, report):
    result, _ = run
    sr = result.series[0]
    first = sr.evidence["calibration"][sr.benchmark_id][0]["by_horizon"][0]
    assert f"{first['hits']} / {first['trials']}" in report
    assert "A backtest is evidence, not a guarantee" in report
    assert "Prediction intervals assume the model is right" in report


def test_residual_time_plots_appear_when_the_series_is_supplied(run, report, troubled):
    result, _ = run
    assert report.count("one-step residuals over time") == 2 * len(result.series)
    assert "one-step residuals over time" not in troubled
    assert "actuals recorded by the backtest" in troubled  # forecast history from the folds
    assert troubled.count("<svg") == 7


def test_failed_folds_and_warnings_are_listed(troubled):
    assert "LinAlgError: singular matrix" in troubled
    assert "ConvergenceWarning: gave up" in troubled


def test_stored_text_cannot_inject_markup(troubled):
    assert "<script>" not in troubled and "&lt;script&gt;alert(1)&lt;/script&gt;" in troubled


def test_series_must_be_keyed_by_their_fingerprint(run):
    result, values = run
    series = next(iter(values.values()))
    with pytest.raises(ValueError, match="fingerprint"):
        render_run_report(result, META, {series.key: series})


@pytest.mark.parametrize("spec", [AIRLINE, {"family": "theta"},
                                  {"family": "benchmark", "method": "seasonal_naive"}])
def test_refitted_residuals_are_those_the_stored_diagnostics_describe(spec):
    series = demo_series()[0]
    stored = full_series_diagnostics(series, parse_candidate(spec))["residuals"]
    fitted = full_fit_residuals(series, spec)
    assert len(fitted.values) == len(fitted.periods) == stored["n"]
    assert fitted.periods[-1] == series.labels()[-1]
    assert np.allclose(autocorrelations(fitted.values, stored["acf"]["nlags"]),
                       stored["acf"]["acf"], atol=1e-6)


def test_refitted_residuals_belong_to_the_periods_they_are_labelled_with():
    series = demo_series()[0]
    naive = full_fit_residuals(series, {"family": "benchmark", "method": "seasonal_naive"})
    at = series.index_of(naive.periods[0])
    assert naive.values[0] == pytest.approx(series.values[at] - series.values[at - 12])
    assert naive.values[-1] == pytest.approx(series.values[-1] - series.values[-13])


def test_report_command_writes_a_stored_runs_report(tmp_path, capsys):
    url = f"sqlite:///{tmp_path / 'store.db'}"
    upgrade(url)
    engine = make_engine(url)
    with session_factory(engine).begin() as session:
        run_id, _, result = run_and_store(session, [monthly_series("sales/north", seed=3)])
    with session_factory(engine).begin() as session:
        inputs = load_report_inputs(session, run_id)
    engine.dispose()
    assert inputs.run_meta["versions"][0]["number"] == 1
    out = tmp_path / "report.html"

    args = build_parser().parse_args(["report", str(run_id), "-o", str(out),
                                      "--database-url", url])
    assert args.handler(args) == 0

    html = out.read_text(encoding="utf-8")
    assert result.series[0].series["fingerprint"] in html and "<svg" in html
    assert f"report of run {run_id} written" in capsys.readouterr().out


def test_report_command_says_when_the_run_does_not_exist(tmp_path, capsys):
    import argparse

    url = f"sqlite:///{tmp_path / 'store.db'}"
    upgrade(url)
    parser = argparse.ArgumentParser(prog="foldline")
    register(parser.add_subparsers(dest="command", required=True))
    args = parser.parse_args(["report", "99", "-o", str(tmp_path / "r.html"),
                              "--database-url", url])
    assert args.handler(args) == 2
    assert "run 99 does not exist" in capsys.readouterr().err
    assert not (tmp_path / "r.html").exists()


def test_per_candidate_charts_are_drawn_for_the_best_three_and_the_benchmark():
    series = demo_series()[:1]
    candidates = parse_candidates([{"family": "benchmark", "method": m}
                                   for m in ("naive", "drift", "mean")] + [{"family": "theta"}])
    result = run_backtest(series, candidates, parse_plan({"horizon": 3, "max_origins": 4}))
    sr = result.series[0]
    charted = charted_candidates(sr)
    ranked = sorted((r for r in sr.ranking if r.rank is not None), key=lambda r: r.rank)

    report = render_run_report(result, META)

    assert charted == {sr.benchmark_id, *(r.candidate_id for r in ranked[:3])}
    assert len(sr.candidates) == 5 and len(charted) in (3, 4)
    for c in sr.candidates:
        drawn = f"interval calibration of {c.label}" in report
        assert drawn == (c.candidate_id in charted), c.label
    assert "drawn for the 3 best-ranked candidates and the benchmark" in report


def test_a_lean_run_reports_without_diagnostics():
    series = demo_series()[:1]
    plan = parse_plan({"horizon": 3, "max_origins": 3, "assessment": "lean"})
    candidates = parse_candidates([DEMO_CANDIDATES[3]])
    result = run_backtest(series, candidates, plan)
    html = render_run_report(result, META, {s.fingerprint(): s for s in series})

    assert "model assessment (full, or lean" in html
    assert result.series[0].evidence["diagnostics"][candidates[0].id] is None
    assert candidates[0].label(12) in html


def test_a_run_with_more_series_than_are_detailed_opens_with_every_series(tmp_path):
    url = f"sqlite:///{tmp_path / 'store.db'}"
    upgrade(url)
    engine = make_engine(url)
    keys = ["costs/a", "costs/b", "sales/c"]
    with session_factory(engine).begin() as session:
        run_id, _, result = run_and_store(session, [monthly_series(k, seed=i)
                                                    for i, k in enumerate(keys)])
    with session_factory(engine).begin() as session:
        small = load_report_inputs(session, run_id, detailed=2)
        whole = load_report_inputs(session, run_id)
    engine.dispose()

    html = render_run_report(small.result, small.run_meta, small.series_values,
                             overview=small.overview)

    assert [sr.series["key"] for sr in small.result.series] == keys[:2]
    assert len(small.series_values) == 2 and whole.overview is None
    assert "3 series, the first 2 in full" in html and "<h2>Every series</h2>" in html
    table = html[html.index("<h2>Every series</h2>"):html.index('<section class="series">')]
    for sr in result.series:  # each series' line names its engine-ranked top candidate
        top = next(r for r in sr.ranking if r.rank == 1)
        line = re.search(rf"<tr><td>{re.escape(sr.series['key'])}</td>.*?</tr>", table)[0]
        cells = re.findall(r"<td[^>]*>(.*?)</td>", line)
        label = top.label + (" (benchmark)" if top.is_benchmark else "")
        assert cells[2:4] == [label, f"{top.score:.3f}"]
    assert [h for h in re.findall(r"<h2>Series (.*?)</h2>", html)] == keys[:2]
    # Provenance still names every version the run used, detailed or not.
    assert all(v["fingerprint"] in html for v in small.run_meta["versions"])
    assert len(small.run_meta["versions"]) == 3


def _distribution_row(report, label):
    """The cells of the distribution-score table row whose candidate cell is ``label``."""
    table = report[report.index('class="distribution"'):]
    found = [cells for cells in _cells(table[:table.index("</table>")])
             if cells and cells[0] == label]
    if not found:
        raise AssertionError(f"no distribution row for {label}")
    return found[0]


def test_distribution_scores_of_every_candidate_are_reported(run, report):
    result, _ = run
    sr = result.series[0]
    section = report[report.index(f"Series {sr.series['key']}"):]
    pooled = {(s.candidate_id, s.metric): s.value for s in sr.scores
              if s.horizon is None and s.level is None}
    for r in sr.ranking:
        cells = _distribution_row(section, r.label)
        assert unescape(cells[1]) == "the model's"
        assert cells[2:5] == [f"{pooled[r.candidate_id, m]:.3f}"
                              for m in ("crps", "pinball", "scaled_pinball")]


def test_a_run_with_a_combination_and_empirical_intervals_reports():
    series = demo_series()[:1]
    plan = parse_plan({"horizon": 2, "max_origins": 24, "seed": 1})
    naive = {"family": "benchmark", "method": "naive"}
    candidates = parse_candidates([
        {**naive, "intervals": {"kind": "empirical", "min_errors": 10, "errors": "scaled"}},
        {"family": "combination", "members": [naive, {"family": "benchmark",
                                                      "method": "drift"}]}])
    result = run_backtest(series, candidates, plan)
    html = render_run_report(result, META)
    labels = {c.candidate_id: c.label for c in result.series[0].candidates}
    assert _distribution_row(html, labels[candidates[0].id])[1] == \
        "empirical (scaled errors, at least 10)"
    assert _distribution_row(html, labels[candidates[1].id])[1] == \
        "empirical (raw errors, at least 20)"
    parser = _Nesting()
    parser.feed(html)
    assert parser.problems == [] and parser.open == []
