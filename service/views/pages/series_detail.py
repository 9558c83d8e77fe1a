"""The page of one series: its facts, versions with fingerprints, the runs that used them,
and the ranking of its latest successful run with the score overview and forecast charts."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from sqlalchemy.orm import Session

from backtest.results import SeriesResult
from backtest.series import Series
from service.views.charts.render import DRAWING
from service.views.pages.layout import run_href
from service.views.report.cautions import caution_block
from service.views.report.embed import ChartEmbedder
from service.views.report.html import Html, element, join, link, table
from service.views.report.provenance import shown
from service.views.report.ranking import ranking_section
from storage.db import FINAL_STATUSES
from storage.results import LatestRun, latest_successful_run, load_series_result
from storage.runs import RunInfo, run_request, runs_using_version
from storage.series import SeriesInfo, VersionInfo, get_series, list_versions, load_series


@dataclass(frozen=True)
class SeriesPage:
    """What a series' page shows, read in one transaction."""

    series: SeriesInfo
    versions: list[VersionInfo]
    runs: list[tuple[RunInfo, int]]
    latest: LatestRun | None
    result: SeriesResult | None
    plan: dict[str, Any] | None
    values: Series | None


def load_series_page(session: Session, key: str) -> SeriesPage:
    """The series, its versions, the runs that used them (newest first, with the version
    number used) and its latest successful run's result; ``NotFoundError`` if unknown."""
    series = get_series(session, key)
    versions = list_versions(session, key)
    used = {run.id: (run, v.number) for v in versions for run in runs_using_version(session, v.id)}
    runs = sorted(used.values(), key=lambda pair: -pair[0].id)
    latest = latest_successful_run(session, key)
    if latest is None:
        return SeriesPage(series, versions, runs, None, None, None, None)
    return SeriesPage(series, versions, runs, latest,
                      load_series_result(session, latest.run_id, latest.series_version_id),
                      run_request(session, latest.run_id).plan_body,
                      load_series(session, latest.series_version_id))


def series_detail(page: SeriesPage) -> Html:
    """The body of a series' page, charts drawn."""
    return join([_facts(page.series), caution_block(), element("h2", "Versions"),
                 _versions(page.versions),
                 element("h2", "Runs"), _runs(page.runs), _latest_ranking(page)])


def _facts(s: SeriesInfo) -> Html:
    tags = ", ".join(f"{name}: {value}" for name, value in sorted(s.tags.items()))
    facts = [("frequency", s.frequency), ("season length", s.season_length),
             ("unit", shown(s.unit)), ("tags", tags or "none"),
             ("created", f"{shown(s.created_at)} by {s.created_by}")]
    return table(None, facts, cls="facts")


def _versions(versions: list[VersionInfo]) -> Html:
    rows = [(v.number, f"{shown(v.created_at)} by {v.created_by}", v.change, v.n_obs,
             f"{v.first_period} .. {v.last_period}", element("span", v.fingerprint, cls="mono"))
            for v in reversed(versions)]
    return table(["version", "stored", "change", "obs.", "periods", "fingerprint (SHA-256)"],
                 rows, numeric=(0, 3))


def _runs(runs: list[tuple[RunInfo, int]]) -> Html:
    if not runs:
        return element("p", "No run has used this series yet.")
    rows = [(_run_link(run), run.status, number, run.requested_by, shown(run.queued_at),
             shown(run.finished_at), f"{run.folds_done} / {shown(run.folds_total)}")
            for run, number in runs]
    return table(["run", "status", "version", "requested by", "queued", "finished",
                  "folds done / total"], rows, numeric=(2, 6))


def _run_link(run: RunInfo) -> object:
    label = f"run {run.id}"
    return link(run_href(run.id), label) if run.status in FINAL_STATUSES else label


def _latest_ranking(page: SeriesPage) -> Html:
    latest = page.latest
    if latest is None or page.result is None or page.plan is None:
        return element("p", "No successful run yet, so no ranking.")
    with DRAWING:
        ranking = ranking_section(page.result, page.plan, ChartEmbedder(),
                                  unit=page.series.unit, series=page.values)
    return join([
        element("h2", "Latest ranking"),
        element("p", "From ", link(run_href(latest.run_id), f"run {latest.run_id}"),
                f" on version {latest.version_number}, finished {shown(latest.finished_at)}. "
                "The run's report has the calibration, diagnostics, failed folds and warnings."),
        ranking])
