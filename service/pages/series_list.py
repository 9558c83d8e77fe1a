"""The first page a reviewer sees: every series with its latest version, its latest
successful run, that run's top-ranked candidate and score, and its current champion.

The list is paged (:data:`PAGE_SIZE` series a page, by key) and can be narrowed to the keys
that start with a prefix, so a department's thousand series cost one page's queries."""

from __future__ import annotations

from typing import Any
from urllib.parse import urlencode

from sqlalchemy.orm import Session

from service.pages.layout import HOME, run_href, series_href
from service.report.html import Html, element, esc, join, link, table
from service.report.numbers import MISSING, fixed
from service.report.provenance import shown
from service.report.ranking import score_name
from storage.champions import ChampionChoice, current_champions
from storage.queries import LatestRun, latest_successful_runs
from storage.queue import run_request
from storage.result_tables import rank_table
from storage.series_catalog import SeriesInfo, find_series

HEADER = ["series", "unit", "latest version", "latest successful run", "ranked by",
          "top candidate", "score", "ratio to benchmark", "champion"]


PAGE_SIZE = 100


def series_list(session: Session, *, prefix: str | None = None, offset: int = 0,
                limit: int = PAGE_SIZE) -> Html:
    """One page of the series table, ordered by key, with a prefix filter and page links."""
    found = find_series(session, prefix=prefix, offset=offset, limit=limit + 1)
    shown_series, more = found[:limit], len(found) > limit
    latest = {run.series_key: run for run in latest_successful_runs(session)}
    champions = current_champions(session)
    plans: dict[int, dict[str, Any]] = {}
    rows = [_row(session, s, latest.get(s.key), champions.get(s.key), plans)
            for s in shown_series]
    parts: list[object] = [_filter_form(prefix)]
    if not rows:
        empty = "No series is stored yet." if not prefix and not offset else \
            "No series on this page."
        return join([*parts, element("p", empty), _pager(prefix, offset, limit, more)])
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
                     "forecasts.", cls="note"),
        table(HEADER, rows, numeric=(6, 7), cls="series-list"),
        _pager(prefix, offset, limit, more)])


def page_href(prefix: str | None, offset: int) -> str:
    """The address of the series list page starting at ``offset``."""
    query = {k: v for k, v in (("prefix", prefix), ("offset", offset)) if v}
    return HOME + (f"?{urlencode(query)}" if query else "")


def _filter_form(prefix: str | None) -> Html:
    value = esc(prefix or "")
    return Html(f'<form class="filter" method="get" action="{HOME}">'
                '<label for="prefix">Series keys starting with</label> '
                f'<input id="prefix" name="prefix" maxlength="200" value="{value}"> '
                '<button type="submit">Show</button></form>')


def _pager(prefix: str | None, offset: int, limit: int, more: bool) -> Html:
    links = []
    if offset > 0:
        links.append(link(page_href(prefix, max(offset - limit, 0)), "previous page"))
    if more:
        links.append(link(page_href(prefix, offset + limit), "next page"))
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
