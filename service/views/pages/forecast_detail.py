"""An issued forecast's page: what was issued and on what, each step beside its actual,
every outcome set (one per later version with actuals), and a fan chart."""

from __future__ import annotations

from backtest.ledger import Outcome, realised_mase
from backtest.parameter_names import seasonal_period
from service.views.charts.fan import fan_chart
from service.views.charts.render import DRAWING
from service.views.pages.forecast_view import ForecastView, ScoredSet
from service.views.pages.layout import forecast_href, series_href
from service.views.pages.ledger_section import embed_figure
from service.views.report.cautions import caution_block
from service.views.report.html import Html, element, join, link, table
from service.views.report.numbers import MISSING, fixed, interval
from service.views.report.parameters import parameter_cell
from service.views.report.provenance import shown

SETS_HEADER = ["scored against version", "scored", "periods observed", "realised MASE",
               "actuals inside interval"]


#: History shown before a forecast, in multiples of its horizon (at least one season).
HISTORY_PER_STEP = 4


def history_window(horizon: int, season_length: int) -> int:
    """Periods of history the fan chart shows by default: proportional to the horizon, at
    least one whole season (and two periods)."""
    return max(HISTORY_PER_STEP * horizon, season_length, 2)


def forecast_detail(view: ForecastView, history: int | None = None) -> Html:
    """The page body, fan chart drawn with the last ``history`` periods before the origin
    (default :func:`history_window`; 0: all)."""
    f = view.record.forecast
    latest = view.sets[-1] if view.sets else None
    default = history_window(len(f.periods), f.season_length)
    shown_periods = default if history is None else history
    labels, values = view.history.labels(), view.history.values
    start = max(0, labels.index(f.origin) + 1 - shown_periods) if shown_periods else 0
    with DRAWING:
        fig = fan_chart(view.bands, labels[start:], values[start:],
                        series_key=f.series_key, candidate_label=f.label,
                        unit=view.series.unit, frequency=view.series.frequency)
        chart = embed_figure(fig, "forecast-fan-", (
            f"The last {labels.index(f.origin) + 1 - start} periods of history version "
            f"{view.version} held, the point forecast and intervals, and the actuals of the "
            "series' latest version."))
    return join([
        _facts(view), caution_block(), element("h2", "Forecast and actuals"),
        _steps(view, latest), chart, _history_links(view, default),
        element("h2", "Outcomes by version"), _sets(view),
        element("h2", "Parameters"),
        table(["parameter", "estimate"],
              [(parameter_cell(k, seasonal_period(f.candidate_spec, f.season_length)),
                fixed(v, 6)) for k, v in f.params.items()], numeric=(1,)),
        element("h2", "Warnings while fitting"),
        join([element("p", w) for w in f.warnings]) if f.warnings else element("p", "None."),
    ])


def _history_links(view: ForecastView, default: int) -> Html:
    """Links to the same page with more (or all) history in the chart."""
    href = forecast_href(view.record.forecast_id)
    options = [(f"{default} periods (default)", href),
               (f"{3 * default} periods", f"{href}?history={3 * default}"),
               ("all history", f"{href}?history=0")]
    return element("p", "History in the chart: ",
                   Html(" · ".join(link(target, text) for text, target in options)),
                   cls="note history")


def _facts(view: ForecastView) -> Html:
    record, f = view.record, view.record.forecast
    rows = [
        ("series", link(series_href(f.series_key), f.series_key)),
        ("candidate", Html(f"{element('span', f.label)} "
                           f"({element('span', f.candidate_id, cls='mono')})")),
        ("fitted on", f"version {view.version} (last period {f.origin}), SHA-256 "
                      f"{f.fingerprint}"),
        ("horizon", f"{len(f.periods)} steps, {f.periods[0]} to {f.periods[-1]}"),
        ("interval levels", ", ".join(f"{level} %" for level in f.levels)),
        ("issued", f"{shown(record.issued_at)} by {record.issued_by}"),
        ("MASE scale of that version", fixed(f.scale)),
        ("seed", f.seed),
        ("software", "; ".join(f"{k} {v}" for k, v in sorted(f.software.items()))),
    ]
    return table(None, rows, cls="facts")


def _steps(view: ForecastView, latest: ScoredSet | None) -> Html:
    f = view.record.forecast
    by_period: dict[str, Outcome] = ({o.period: o for o in latest.outcomes.outcomes}
                                     if latest else {})
    header = ["step", "period", "point", *[f"{level} % interval" for level in f.levels],
              "actual", "error", "scaled error", "inside"]
    rows = []
    for step, period in enumerate(f.periods):
        outcome = by_period.get(period)
        bounds = [interval(level, f.lower[level][step], f.upper[level][step], 3)
                  for level in f.levels]
        observed = ([fixed(outcome.actual), fixed(outcome.error), fixed(outcome.scaled_error),
                     ", ".join(f"{level} %: {'yes' if outcome.hits[level] else 'no'}"
                               for level in f.levels)]
                    if outcome else ["not yet observed", MISSING, MISSING, MISSING])
        rows.append([step + 1, period, fixed(f.point[step]), *bounds, *observed])
    note = (f"Actuals and errors from version {latest.version}, the newest scored; the error "
            "is actual minus point, the scaled error divides it by the MASE scale."
            if latest else "No period of this forecast has been observed yet.")
    numeric = tuple(range(2, 3 + len(f.levels) + 3))
    return join([element("p", note, cls="note"), table(header, rows, numeric=numeric)])


def _sets(view: ForecastView) -> Html:
    if not view.sets:
        return element("p", "No outcomes yet: no later version of the series has an actual "
                            "for a period of this forecast.")
    levels = view.record.forecast.levels
    rows = [(s.version, shown(s.outcomes.scored_at),
             f"{len(s.outcomes.outcomes)} of {len(view.record.forecast.periods)}",
             fixed(realised_mase(s.outcomes.outcomes)),
             "; ".join(f"{level} %: {sum(o.hits[level] for o in s.outcomes.outcomes)} of "
                       f"{len(s.outcomes.outcomes)}" for level in levels))
            for s in view.sets]
    note = element("p", "Each version of the series with actuals for this forecast's periods "
                        "gets its own set; a corrected version adds a set and never changes "
                        "an earlier one.", cls="note")
    return join([note, table(SETS_HEADER, rows, numeric=(0, 3))])
