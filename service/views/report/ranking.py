"""One series' ranking: the table with the ratio to the benchmark, significance and
confidence-set membership, the score-by-horizon overview, and the top candidate's forecast
from the last origin."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from backtest.results import SeriesResult
from backtest.series import Series
from service.views.charts import ForecastBands, fan_chart, score_by_horizon_chart
from service.views.charts.overview import METRIC_AXES
from service.views.ranking_text import common_ground, score_cell
from service.views.report.embed import ChartEmbedder
from service.views.report.html import Html, element, join, table
from service.views.report.numbers import MISSING, fixed, p_value, verdict

#: Seasons of history drawn before the last origin in the forecast chart (at least 24 steps).
HISTORY_SEASONS = 3


def score_name(plan: Mapping[str, Any]) -> str:
    """``MASE over all horizons``, ``RMSE at h = 3``, ...: what the ranking is based on."""
    where = "all horizons" if plan["rank_horizon"] is None else f"h = {plan['rank_horizon']}"
    return f"{METRIC_AXES[plan['rank_by']].name} over {where}"


def ranking_section(sr: SeriesResult, plan: Mapping[str, Any], charts: ChartEmbedder, *,
                    unit: str | None, series: Series | None) -> Html:
    """Ranking table, overview chart and forecast chart of one series."""
    metric = METRIC_AXES[plan["rank_by"]].name
    confidence = sr.evidence.get("confidence_set", {})
    size = confidence.get("size")
    set_name = f"{100 * (1 - size):.0f} % confidence set" if size else "confidence set"
    mcs_p = confidence.get("p_values", {})
    rows = [(MISSING if r.rank is None else r.rank,
             r.label + (" (benchmark)" if r.is_benchmark else ""),
             score_cell(vars(r), fixed(r.score)), fixed(r.score_own_folds),
             MISSING if r.is_benchmark else fixed(r.ratio_to_benchmark),
             MISSING if r.is_benchmark else verdict(r.beats_benchmark, "yes", "no"),
             verdict(r.in_confidence_set, "in", "out")
             + (f" (p {p_value(mcs_p[r.candidate_id])})" if r.candidate_id in mcs_p else ""),
             r.calibration_zone or MISSING,
             f"{r.folds_ok} / {r.folds_failed} / {r.folds_not_converged}")
            for r in sr.ranking]
    parts: list[object] = [
        element("h3", "Ranking"),
        element("p", f"Ranked by {score_name(plan)}"
                     f"{common_ground([vars(r) for r in sr.ranking]) or ''}. 'Own folds' is "
                     "the figure over the candidate's own completed folds; a figure carried "
                     "by fewer than half of its points shows the count. The ratio to the "
                     f"benchmark is the candidate's {metric} divided by the benchmark's (a "
                     "relative measure, e.g. relative MASE; Hyndman & Koehler 2006): lower is "
                     "better, below 1 beats the benchmark. It is not a skill score, which is 1 "
                     "minus this ratio (Murphy 1988), higher being better. 'Significantly "
                     "better' is the Diebold-Mariano test with the Harvey-Leybourne-Newbold "
                     f"correction at 5 %. The {set_name} holds the candidates that cannot be "
                     "told apart from the best (Hansen, Lunde & Nason 2011).", cls="note"),
        table(["rank", "candidate", metric, f"{metric}, own folds", "ratio to benchmark",
               "significantly better than benchmark", set_name, "calibration at h = 1",
               "folds ok / failed / not converged"], rows, numeric=(0, 2, 3, 4, 8),
              cls="ranking"),
        charts.embed(score_by_horizon_chart(sr, metric=plan["rank_by"], unit=unit),
                     f"{metric} of every candidate at each horizon, averaged over the origins; "
                     "the benchmark is the thick black dashed line."),
    ]
    parts.append(_forecast_chart(sr, charts, unit=unit, series=series))
    return join(parts)


def _forecast_chart(sr: SeriesResult, charts: ChartEmbedder, *, unit: str | None,
                    series: Series | None) -> Html:
    top = next((r for r in sr.ranking if r.rank == 1), None)
    if top is None:
        return element("p", "No forecast chart: no candidate has a score.", cls="note")
    last = max((f for f in sr.folds if f.candidate_id == top.candidate_id and f.status == "ok"),
               key=lambda f: f.fold)
    periods, values = _history(sr, series)
    if last.origin not in periods:
        return element("p", "No forecast chart: the history up to the last origin is not "
                            "available.", cls="note")
    start = max(0, periods.index(last.origin) + 1 - _history_length(sr))
    figure = fan_chart(ForecastBands.from_fold(last), periods[start:], values[start:],
                       series_key=sr.series["key"], candidate_label=top.label, unit=unit,
                       frequency=sr.series.get("frequency"))
    source = ("the stored series version" if series is not None
              else "the actuals recorded by the backtest (the series itself was not supplied)")
    return charts.embed(figure, f"Forecast of the top-ranked candidate from the last origin, "
                                f"with its central intervals and the actuals; history from "
                                f"{source}.")


def _history_length(sr: SeriesResult) -> int:
    return max(24, HISTORY_SEASONS * int(sr.series.get("season_length") or 1))


def _history(sr: SeriesResult, series: Series | None) -> tuple[list[str], list[float]]:
    if series is not None:
        return series.labels(), [float(v) for v in series.values]
    # Canonical period labels (YYYY, YYYY-MM, YYYY-MM-DD) sort in time order as text.
    actual = {p: a for f in sr.folds for p, a in zip(f.periods, f.actuals)}
    periods = sorted(actual)
    return periods, [actual[p] for p in periods]
