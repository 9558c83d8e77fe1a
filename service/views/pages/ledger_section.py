"""The ledger section of a series' page: the champion and its history, the issued forecasts
with their current outcomes, the champion's monitoring flags and chart, and a fan chart of
the latest issued forecast against the actuals known now."""

from __future__ import annotations

from matplotlib.figure import Figure

from backtest.ledger import MonitoringReport, realised_mase
from service.cli.ledger_text import flag_state
from service.usecases.monitoring import Monitored
from service.views.charts.fan import fan_chart
from service.views.charts.monitoring import monitoring_chart
from service.views.charts.render import DRAWING, render
from service.views.pages.layout import forecast_href, run_href
from service.views.pages.ledger_view import IssuedRow, LatestForecast, LedgerView
from service.views.report.embed import inline_svg
from service.views.report.html import Html, element, esc, join, link, table
from service.views.report.numbers import MISSING, fixed, p_value
from service.views.report.provenance import shown
from storage.ledger import ChampionChoice

ISSUED_HEADER = ["forecast", "candidate", "fitted on version", "origin", "horizon (steps)",
                 "issued", "periods observed", "realised MASE", "actuals inside interval"]
FLAG_HEADER = ["rule", "level", "verdict", "statistic", "p-value", "false-alarm rate",
               "first period", "detail"]


def ledger_section(view: LedgerView) -> Html:
    """The section, charts drawn."""
    labels = {row.record.forecast.candidate_id: row.record.forecast.label
              for row in reversed(view.issued)}
    with DRAWING:
        monitoring = _monitoring(view.monitored, labels, view.series.frequency)
        latest = _latest(view.latest, view)
    return join([element("h2", "Forecast ledger"),
                 element("h3", "Champion"), _champions(view.choices, labels),
                 element("h3", "Issued forecasts"), _issued(view, labels), *monitoring,
                 *latest])


def _champions(choices: list[ChampionChoice], labels: dict[str, str]) -> Html:
    if not choices:
        return element("p", "No champion has been chosen, so no forecast is monitored.")
    rows = [(shown(c.chosen_at), "current" if i == 0 else "earlier",
             _candidate(c.candidate_id, labels),
             MISSING if c.run_id is None else link(run_href(c.run_id), f"run {c.run_id}"),
             c.chosen_by, c.reason) for i, c in enumerate(reversed(choices))]
    return table(["chosen", "choice", "candidate", "justifying run", "chosen by", "reason"],
                 rows)


def _issued(view: LedgerView, labels: dict[str, str]) -> Html:
    if not view.issued:
        return element("p", "No forecast has been issued for this series.")
    shown_note = (f"The newest {len(view.issued)} of {view.issued_total}, newest first. "
                  if view.issued_total > len(view.issued) else "Newest first. ")
    note = element("p", shown_note + "Outcomes are scored against the newest version of the "
                   "series with actuals for the forecast's periods; MASE scales each error "
                   "by the issuing version's mean seasonal-naive error.", cls="note")
    return join([note, table(ISSUED_HEADER, [_issued_row(row, labels) for row in view.issued],
                             numeric=(0, 2, 4, 7))])


def _issued_row(row: IssuedRow, labels: dict[str, str]) -> list[object]:
    record, f = row.record, row.record.forecast
    cells: list[object] = [link(forecast_href(record.forecast_id), record.forecast_id),
                           _candidate(f.candidate_id, labels), row.version,
                           f.origin, f.horizon, f"{shown(record.issued_at)} by {record.issued_by}"]
    if row.outcomes is None or not row.outcomes.outcomes:
        return [*cells, "none yet", MISSING, MISSING]
    outcomes = row.outcomes.outcomes
    inside = "; ".join(f"{level} %: {sum(o.hits[level] for o in outcomes)} of {len(outcomes)}"
                       for level in f.levels)
    return [*cells, f"{len(outcomes)} of {f.horizon} (version {row.scored_version})",
            fixed(realised_mase(outcomes)), inside]


def _monitoring(monitored: Monitored | None, labels: dict[str, str],
                frequency: str) -> list[Html]:
    if monitored is None:
        return []
    report = monitored.report
    label = labels.get(report.candidate_id, report.candidate_id)
    title = element("h3", f"Monitoring of the champion, {label}")
    if not monitored.forecasts:
        return [title, element("p", "No forecast of the champion has been issued yet.")]
    chart = embed_figure(monitoring_chart(report, candidate_label=label, frequency=frequency),
                   "ledger-monitoring-", "Realised accuracy by target period against the "
                   "backtest, interval coverage to date against the nominal levels; raised "
                   "flags are marked at the period they point at.")
    return [title, element("p", _basis(monitored), cls="note"), _flags(report), chart]


def _basis(monitored: Monitored) -> str:
    expectation = monitored.report.expectation
    against = ("no successful backtest of this candidate, so accuracy has nothing to be "
               "compared with" if expectation is None
               else f"expectation from the backtest of run {expectation.run_id}")
    return (f"{monitored.forecasts} issued forecast(s); {against}. Each flag tests the "
            "one-step outcomes only, one per origin; a flag is raised when its p-value is "
            "below its false-alarm rate, clear when it is not, and a rule with too few "
            "outcomes to test says \"not enough data\" (had of needed), which is no "
            "all-clear.")


def _flags(report: MonitoringReport) -> Html:
    rows = [(f.rule.replace("_", " "), MISSING if f.level is None else f"{f.level} %",
             element("strong", "RAISED") if f.raised
             else flag_state(f.state, f.outcomes, f.needed), fixed(f.statistic),
             p_value(f.p_value), fixed(f.threshold, 2), shown(f.first_period), f.detail)
            for f in report.flags]
    return table(FLAG_HEADER, rows, numeric=(3, 4, 5), cls="flags")


def _latest(latest: LatestForecast | None, view: LedgerView) -> list[Html]:
    if latest is None:
        return []
    f = latest.record.forecast
    fig = fan_chart(latest.bands, latest.history.labels(), latest.history.values,
                    series_key=view.series.key, candidate_label=f.label,
                    unit=view.series.unit, frequency=view.series.frequency)
    caption = (f"Forecast {latest.record.forecast_id}, issued {shown(latest.record.issued_at)} "
               f"from version {latest.version}: the history it was fitted on, its "
               "point forecast and intervals, and the actuals of the series' latest version.")
    return [element("h3", "Latest issued forecast"), embed_figure(fig, "ledger-fan-", caption)]


def embed_figure(fig: Figure, prefix: str, caption: str) -> Html:
    """The figure as inline SVG; the prefix keeps its ids apart from the page's other charts."""
    svg = render(fig, "svg").decode()
    title = fig.get_suptitle().replace("\n", " ")
    return Html(f'<figure class="chart">\n{inline_svg(svg, prefix, title)}\n'
                f"<figcaption>{esc(caption)}</figcaption>\n</figure>")


def _candidate(candidate_id: str, labels: dict[str, str]) -> Html:
    label = labels.get(candidate_id)
    code = element("span", candidate_id, cls="mono")
    return code if label is None else Html(f"{esc(label)} ({code})")
