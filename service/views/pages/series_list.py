"""The first page a reviewer sees: every series with its latest version, its latest
successful run, that run's top-ranked candidate and score, its current champion and the
state of that champion's monitoring flags (filterable).

The list is paged (:data:`PAGE_SIZE` series a page, by key) and can be narrowed to the keys
that start with a prefix, so a department's thousand series cost one page's queries."""

from __future__ import annotations

from typing import Any
from urllib.parse import urlencode

from sqlalchemy.orm import Session

from service.usecases.monitoring import monitor_series
from service.views.pages.layout import HOME, run_href, series_href
from service.views.report.html import Html, element, esc, join, link, table
from service.views.report.numbers import MISSING, fixed
from service.views.report.provenance import shown
from service.views.report.ranking import score_name
from storage.ledger import ChampionChoice, current_champions
from storage.results import LatestRun, latest_successful_runs, rank_table
from storage.runs import run_request
from storage.series import SeriesInfo, find_series

HEADER = ["series", "unit", "latest version", "latest successful run", "ranked by",
          "top candidate", "score", "ratio to benchmark", "champion", "monitoring"]
#: The monitoring states a reader can filter on, as shown in the table.
STATES = ("raised", "clear", "not enough data", "no champion")


PAGE_SIZE = 100


def series_list(session: Session, *, prefix: str | None = None, offset: int = 0,
                limit: int = PAGE_SIZE, state: str | None = None) -> Html:
    """One page of the series table, ordered by key, with prefix and monitoring-state
    filters and page links.

    Without a state filter only the page's series are monitored; with one, every series
    under the prefix is (its champion's flags decide whether it is listed).
    """
    champions = current_champions(session)
    if state is None:
        found = find_series(session, prefix=prefix, offset=offset, limit=limit + 1)
        states = {s.key: monitoring_state(session, s.key, champions.get(s.key))
                  for s in found[:limit]}
    else:
        every = find_series(session, prefix=prefix)
        states = {s.key: monitoring_state(session, s.key, champions.get(s.key))
                  for s in every}
        found = [s for s in every if states[s.key] == state][offset:offset + limit + 1]
    shown_series, more = found[:limit], len(found) > limit
    latest = {run.series_key: run for run in latest_successful_runs(session)}
    plans: dict[int, dict[str, Any]] = {}
    rows = [[*_row(session, s, latest.get(s.key), champions.get(s.key), plans),
             _state_cell(states[s.key])] for s in shown_series]
    parts: list[object] = [_filter_form(prefix, state)]
    if not rows:
        empty = ("No series on this page." if prefix or offset else
                 f"No series is in monitoring state {state!r}." if state else
                 "No series is stored yet.")
        return join([*parts, element("p", empty), _pager(prefix, state, offset, limit, more)])
    first, last = offset + 1, offset + len(rows)
    span = f"Series {first}" if first == last else f"Series {first} to {last}"
    return join([
        *parts,
        element("p", f"{span}, by key"
                     + (f", starting with {prefix!r}" if prefix else "") + ". Score and "
                     "ratio to benchmark are those of the top-ranked candidate on the series' "
                     "latest successful run, by that run's ranking score; the ratio is its "
                     "score divided by the benchmark's: lower is better, below 1 beats the "
                     "benchmark. The champion is the candidate last chosen for issuing "
                     "forecasts; monitoring says whether a flag on its issued forecasts is "
                     "raised, all are clear, or there are too few outcomes to tell.",
                cls="note"),
        table(HEADER, rows, numeric=(6, 7), cls="series-list"),
        _pager(prefix, state, offset, limit, more)])


def monitoring_state(session: Session, key: str, champion: ChampionChoice | None) -> str:
    """One of :data:`STATES` for the series' champion: ``raised`` when any flag is,
    ``not enough data`` when no rule had enough outcomes, else ``clear``."""
    if champion is None:
        return "no champion"
    flags = monitor_series(session, key, champion.candidate_id).report.flags
    if any(flag.raised for flag in flags):
        return "raised"
    if all(flag.p_value is None for flag in flags):
        return "not enough data"
    return "clear"


def _state_cell(state: str) -> Html:
    return element("strong", state.upper(), cls="alert") if state == "raised" else esc(state)


def page_href(prefix: str | None, offset: int, state: str | None = None) -> str:
    """The address of the series list page starting at ``offset``."""
    query = {k: v for k, v in (("prefix", prefix), ("state", state), ("offset", offset)) if v}
    return HOME + (f"?{urlencode(query)}" if query else "")


def _filter_form(prefix: str | None, state: str | None) -> Html:
    value = esc(prefix or "")
    options = "".join(
        f'<option value="{esc(option)}"{" selected" if option == (state or "") else ""}>'
        f"{esc(option or 'any')}</option>" for option in ("", *STATES))
    return Html(f'<form class="filter" method="get" action="{HOME}">'
                '<label for="prefix">Series keys starting with</label> '
                f'<input id="prefix" name="prefix" maxlength="200" value="{value}"> '
                '<label for="state">monitoring</label> '
                f'<select id="state" name="state">{options}</select> '
                '<button type="submit">Show</button></form>')


def _pager(prefix: str | None, state: str | None, offset: int, limit: int,
           more: bool) -> Html:
    links = []
    if offset > 0:
        links.append(link(page_href(prefix, max(offset - limit, 0), state), "previous page"))
    if more:
        links.append(link(page_href(prefix, offset + limit, state), "next page"))
    return element("nav", Html(" | ".join(links)), cls="pager") if links else Html("")


def _row(session: Session, s: SeriesInfo, latest: LatestRun | None,
         champion: ChampionChoice | None, plans: dict[int, dict[str, Any]]) -> list[object]:
    cells: list[object] = [link(series_href(s.key), s.key), shown(s.unit),
                           f"{s.latest.number} ({s.latest.n_obs} obs. to {s.latest.last_period})"]
    if latest is None:
        return [*cells, "none yet", MISSING, MISSING, MISSING, MISSING,
                _champion(champion, {})]
    ranking = rank_table(session, latest.run_id, series_key=s.key)
    labels = {r["candidate_id"]: r["candidate"] for r in ranking}
    top = next((r for r in ranking if r["rank"] == 1), None)
    if latest.run_id not in plans:
        plans[latest.run_id] = run_request(session, latest.run_id).plan_body
    run = Html(link(run_href(latest.run_id), f"run {latest.run_id}") + esc(
        f" on version {latest.version_number}, {latest.finished_at:%Y-%m-%d %H:%M}"))
    ranked_by = score_name(plans[latest.run_id])
    if top is None:
        return [*cells, run, ranked_by, MISSING, MISSING, MISSING,
                _champion(champion, labels)]
    label = top["candidate"] + (" (benchmark)" if top["is_benchmark"] else "")
    return [*cells, run, ranked_by, label, fixed(top["score"]), fixed(top["ratio_to_benchmark"]),
            _champion(champion, labels)]


def _champion(champion: ChampionChoice | None, labels: dict[str, str]) -> str:
    if champion is None:
        return "none chosen"
    return labels.get(champion.candidate_id, champion.candidate_id)
