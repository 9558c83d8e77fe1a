"""The run report: one self-contained HTML page per run, charts inline, ready to print on A4."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from backtest.results import BacktestResult, SeriesResult
from backtest.series import Series
from service.views.report.calibration import calibration_section
from service.views.report.cautions import cautions
from service.views.report.diagnostics import diagnostics_section, has_residual_chart
from service.views.report.distribution import distribution_section
from service.views.report.embed import ChartEmbedder
from service.views.report.html import Html, element, join
from service.views.report.overview import overview_section
from service.views.report.page import page
from service.views.report.problems import problems_section
from service.views.report.provenance import shown, what_was_run
from service.views.report.ranking import ranking_section, score_name
from service.views.report.residuals import FitResiduals, full_fit_residuals
from service.views.report.selection import charted_candidates


def render_run_report(result: BacktestResult, run_meta: Mapping[str, Any],
                      series_values: Mapping[str, Series] | None = None, *,
                      refit_residuals: bool = True,
                      overview: Sequence[Mapping[str, Any]] | None = None) -> str:
    """The HTML report of one run.

    ``run_meta`` describes the run as stored (every key optional): ``run_id``, ``status``,
    ``requested_by``, ``queued_at``, ``started_at``, ``finished_at``, ``failure_reason``,
    ``versions`` (dicts with ``fingerprint`` and ``number``) and ``units`` (series key to
    unit). ``series_values`` maps a series version's fingerprint to its :class:`Series`;
    with it the forecast chart shows the full recent history and, unless
    ``refit_residuals`` is false, the residual charts get their time and QQ panels (each
    charted candidate is refitted to the series once, which takes a moment for ARIMA
    models). Per-candidate charts are drawn for the candidates
    :func:`~service.views.report.selection.charted_candidates` names; tables cover all.
    ``overview`` (the stored ranking rows of every series of the run) is given when
    ``result`` holds only the first of the run's series: the report then opens with a
    one-line-per-series table of all of them and details only those in ``result``.
    """
    values = dict(series_values or {})
    for fingerprint, given in values.items():
        if given.fingerprint() != fingerprint:
            raise ValueError(f"series {given.key!r} is keyed by fingerprint "
                             f"{fingerprint[:12]}..., but its data has another fingerprint")
    charts = ChartEmbedder()
    run = shown(run_meta.get("run_id"))
    detailed = [sr.series["key"] for sr in result.series]
    if overview is None:
        about = f"{len(detailed)} series ({', '.join(detailed) or 'no series stored'})"
    else:
        count = len({row["series_key"] for row in overview})
        about = f"{count} series, the first {len(detailed)} in full"
    body = [element("h1", f"Foldline run report: run {run}"),
            element("p", f"{about}; horizon {result.plan.get('horizon')}; ranked by "
                         f"{score_name(result.plan)}; {_fold_counts(result, overview)}.",
                    cls="lede"),
            cautions(result), what_was_run(result, run_meta)]
    if overview is not None:
        body.append(overview_section(overview, result.plan, detailed))
    units = run_meta.get("units", {})
    for sr in result.series:
        series = values.get(sr.series["fingerprint"])
        residuals = _residuals(sr, series) if series is not None and refit_residuals else {}
        body.append(_series_section(sr, result.plan, charts, units.get(sr.series["key"]),
                                    series, residuals))
    return page(f"Foldline run {run}", join(body))


def _fold_counts(result: BacktestResult,
                 overview: Sequence[Mapping[str, Any]] | None) -> str:
    """Folds completed, failed and not converged over every series and candidate of the
    run (from the overview's stored ranking rows when the report details only some)."""
    rows = overview if overview is not None else [
        vars(r) for sr in result.series for r in sr.ranking]
    ok, failed, not_converged = (sum(r[name] or 0 for r in rows) for name in
                                 ("folds_ok", "folds_failed", "folds_not_converged"))
    return (f"folds completed {ok}, failed {failed}, completed but not converged "
            f"{not_converged}")


def _series_section(sr: SeriesResult, plan: Mapping[str, Any], charts: ChartEmbedder,
                    unit: str | None, series: Series | None,
                    residuals: Mapping[str, FitResiduals | None]) -> Html:
    s = sr.series
    heading = element("h2", f"Series {s['key']}")
    about = element("p", f"{s['n_obs']} observations, {s['first_period']} to "
                         f"{s['last_period']}, frequency {s['frequency']}, season length "
                         f"{s['season_length']}; fingerprint ",
                    element("span", s["fingerprint"], cls="mono"), ".")
    charted = charted_candidates(sr)
    return Html('<section class="series">\n' + join([
        heading, about,
        ranking_section(sr, plan, charts, unit=unit, series=series),
        distribution_section(sr),
        calibration_section(sr, charts, charted),
        diagnostics_section(sr, charts, charted, residuals=residuals, unit=unit),
        problems_section(sr),
    ]) + "\n</section>")


def _residuals(sr: SeriesResult, series: Series) -> dict[str, FitResiduals | None]:
    charted = charted_candidates(sr)
    return {c.candidate_id: full_fit_residuals(series, c.spec) for c in sr.candidates
            if c.candidate_id in charted and has_residual_chart(sr, c.candidate_id)}
