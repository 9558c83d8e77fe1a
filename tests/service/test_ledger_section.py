"""The ledger section of a series' page, read from a real SQLite store: champion choices,
issued forecasts with their current outcomes, the champion's flags and monitoring chart, and
a fan chart of the latest issued forecast."""

from __future__ import annotations

import html
import re
from collections.abc import Iterator
from pathlib import Path

import numpy as np
import pytest
from sqlalchemy.orm import Session, sessionmaker

from backtest.ledger import realised_mase, score_outcomes
from backtest.parameter_names import readable
from backtest.series import Series, make_series
from service.usecases.monitoring import monitor_series
from service.views.pages import ledger_view
from service.views.pages.forecast_detail import forecast_detail, history_window
from service.views.pages.forecast_view import load_forecast_page
from service.views.pages.ledger_section import ledger_section
from service.views.pages.ledger_view import load_ledger
from service.views.pages.series_list import STATES, monitoring_state, series_list
from service.views.report.numbers import fixed
from storage.db import make_engine, session_factory
from storage.ledger import choose_champion, current_champion, record_outcomes
from storage.series import load_series, save_series_version
from tests.service.conftest import copied_store, serving
from tests.storage.builders import (
    ACTOR,
    benchmark_candidates,
    issue_and_record,
    monthly_series,
    run_and_store,
)
from tests.storage.conftest import migrated_store

KEY = "sales/north"
NAIVE, DRIFT = (c.id for c in benchmark_candidates())
#: The series jumps by this much at FIRST_JUMP, after the backtest and the first issues.
JUMP, FIRST_JUMP = 60.0, 41


def shifted(n: int) -> Series:
    """The first ``n`` observations of a monthly series that jumps up at FIRST_JUMP."""
    base = monthly_series(KEY, n, seed=1)
    values = np.where(np.arange(n) >= FIRST_JUMP, base.values + JUMP, base.values)
    return make_series(KEY, "P1M", zip(base.labels(), values))


@pytest.fixture(scope="module")
def sessions(tmp_path_factory: pytest.TempPathFactory) -> Iterator[sessionmaker[Session]]:
    """A backtest on 36 observations, two champion choices, drift forecasts issued from 36
    to 48 observations, and every forecast but the last scored against 48 observations."""
    with migrated_store("sqlite", tmp_path_factory.mktemp("ledger-section")) as url:
        engine = make_engine(url)
        sessions = session_factory(engine)
        with sessions.begin() as session:
            run_id, _, _ = run_and_store(session, [shifted(36)])
            for candidate, reason in ((NAIVE, "lowest MASE"),
                                      (DRIFT, "the trend is <real>")):
                choose_champion(session, series_key=KEY, candidate_id=candidate,
                                run_id=run_id, reason=reason, actor=ACTOR)
            issued = [issue_and_record(session, shifted(n)) for n in range(36, 49)]
            final = save_series_version(session, shifted(48), actor=ACTOR).version.id
            for record in issued[:-1]:
                record_outcomes(session, forecast_id=record.forecast_id,
                                series_version_id=final,
                                outcomes=score_outcomes(record.forecast, shifted(48)),
                                actor="worker-1")
        yield sessions
        engine.dispose()


@pytest.fixture(scope="module")
def page(sessions: sessionmaker[Session]) -> str:
    with sessions() as session:
        return ledger_section(load_ledger(session, KEY))


def _issued_rows(page: str) -> dict[int, str]:
    rows = re.findall(r'<tr><td class="num"><a href="/pages/forecasts/(\d+)">\1</a></td>(.*?)</tr>',
                      page)
    return {int(forecast_id): rest for forecast_id, rest in rows}


def test_every_issued_forecast_is_listed_newest_first_with_its_outcomes(sessions, page):
    with sessions() as session:
        view = load_ledger(session, KEY)
    rows = _issued_rows(page)
    ids = [row.record.forecast_id for row in view.issued]
    assert list(rows) == ids == sorted(ids, reverse=True) and len(ids) == 13
    newest, scored = view.issued[0], view.issued[1]
    assert newest.outcomes is None and "none yet" in rows[newest.record.forecast_id]
    outcomes = scored.outcomes.outcomes  # from 47 observations: only h = 1 is observed
    assert f"1 of 4 (version {scored.scored_version})" in rows[scored.record.forecast_id]
    assert fixed(realised_mase(outcomes)) in rows[scored.record.forecast_id]
    oldest = view.issued[-1]
    hits = sum(o.hits[80] for o in oldest.outcomes.outcomes)
    assert f"80 %: {hits} of 4" in rows[oldest.record.forecast_id]


def test_the_champion_and_every_earlier_choice_are_shown(page):
    champions = page[page.index("<h3>Champion</h3>"):page.index("<h3>Issued forecasts</h3>")]
    current, earlier = re.findall(r"<tr><td>.*?</tr>", champions)
    assert "current" in current and DRIFT in current and "the trend is &lt;real&gt;" in current
    assert "earlier" in earlier and NAIVE in earlier and "lowest MASE" in earlier
    assert '<a href="/pages/runs/1">run 1</a>' in current


def test_the_champions_flags_are_listed_with_their_details(sessions, page):
    with sessions() as session:
        report = monitor_series(session, KEY).report
    assert report.candidate_id == DRIFT and report.flags
    for flag in report.flags:
        assert html.escape(flag.detail) in page
    raised = sum(f.raised for f in report.flags)
    assert raised and page.count("<strong>RAISED</strong>") == raised
    assert "expectation from the backtest of run 1" in page


def test_the_monitoring_and_fan_charts_are_inline_svg_with_ids_of_their_own(sessions, page):
    with sessions() as session:
        latest = load_ledger(session, KEY).latest
    assert '<svg role="img" aria-label="sales/north: monitoring of Drift"' in page
    origin = latest.record.forecast.origin
    assert f'aria-label="sales/north: Drift, forecast from {origin}"' in page
    ids = re.findall(r'\bid="([^"]+)"', page)
    assert ids and all(i.startswith(("ledger-monitoring-", "ledger-fan-")) for i in ids)
    assert len(ids) == len(set(ids))


def test_the_fan_chart_shows_the_latest_forecast_with_the_actuals_known_now(sessions):
    with sessions() as session:  # closed without a commit: the new forecast is dropped
        view = load_ledger(session, KEY)
        newer = issue_and_record(session, shifted(47), method="naive")
        now = load_ledger(session, KEY).latest
    assert view.latest.record.forecast.origin == "2022-12"  # issued from 48 observations
    assert view.latest.bands.actuals == (None,) * 4
    assert now.record.forecast_id == newer.forecast_id
    assert now.bands.periods[0] == "2022-12"
    assert now.bands.actuals == (pytest.approx(shifted(48).values[-1]), None, None, None)
    assert now.history.labels()[-1] == now.record.forecast.origin


def test_interpolated_periods_are_not_shown_as_actuals(sessions):
    later = shifted(51)
    rows = [(label, value) for i, (label, value) in enumerate(zip(later.labels(), later.values))
            if i != 48]  # 2023-01 is missing and filled in linearly
    with sessions() as session:  # closed without a commit
        save_series_version(session, make_series(KEY, "P1M", rows, fill="linear"),
                            actor=ACTOR)
        latest = load_ledger(session, KEY).latest
    assert latest.bands.periods == ("2023-01", "2023-02", "2023-03", "2023-04")
    assert latest.bands.actuals == (None, pytest.approx(later.values[49]),
                                    pytest.approx(later.values[50]), None)


def test_only_the_newest_forecasts_are_listed_when_there_are_many(sessions, monkeypatch):
    monkeypatch.setattr(ledger_view, "SHOWN_FORECASTS", 3)
    with sessions() as session:
        view = load_ledger(session, KEY)
    assert len(view.issued) == 3 and view.issued_total == 13
    assert "The newest 3 of 13, newest first." in ledger_section(view)


def test_the_ledger_is_read_whatever_its_length(sessions, monkeypatch):
    with sessions() as session:
        in_one_page = load_ledger(session, KEY)
        monkeypatch.setattr(ledger_view, "PAGE", 5)  # 13 forecasts: pages of 5, 5 and 3
        in_pages = load_ledger(session, KEY)
    assert in_pages.issued_total == 13
    assert [r.record.forecast_id for r in in_pages.issued] == [
        r.record.forecast_id for r in in_one_page.issued]


def test_a_champion_without_issued_forecasts_has_nothing_to_monitor(sessions):
    with sessions() as session:  # closed without a commit
        choose_champion(session, series_key=KEY, candidate_id=NAIVE, run_id=1,
                        reason="back to basics", actor=ACTOR)
        page = ledger_section(load_ledger(session, KEY))
    assert f"<h3>Monitoring of the champion, {NAIVE}</h3>" in page
    assert "No forecast of the champion has been issued yet." in page
    assert "monitoring of" not in page and "forecast from 2022-12" in page


def test_a_series_without_a_ledger_says_so(sessions):
    with sessions() as session:  # closed without a commit
        save_series_version(session, monthly_series("sales/south", 24), actor=ACTOR)
        page = ledger_section(load_ledger(session, "sales/south"))
    assert "No champion has been chosen" in page and "No forecast has been issued" in page
    assert "<svg" not in page and "Monitoring" not in page


def test_the_series_page_carries_the_section(sqlite_template: Path, tmp_path: Path):
    with serving(copied_store(sqlite_template, tmp_path), session_secret="s") as site:
        with site.sessions.begin() as session:
            run_id, _, _ = run_and_store(session, [shifted(36)])
            choose_champion(session, series_key=KEY, candidate_id=DRIFT, run_id=run_id,
                            reason="trend", actor=ACTOR)
            issued = issue_and_record(session, shifted(36))
        signed_in = site.client.post("/pages/sign-in", data={"key": site.tokens["reader"]},
                                     follow_redirects=False)
        cookie = signed_in.headers["set-cookie"].split(";")[0]
        page = site.client.get(f"/pages/series/{KEY}", headers={"Cookie": cookie}).text
        forecast = site.client.get(f"/pages/forecasts/{issued.forecast_id}",
                                   headers={"Cookie": cookie})
        missing = site.client.get("/pages/forecasts/999", headers={"Cookie": cookie})
    assert forecast.status_code == 200
    assert f"<h1>Forecast {issued.forecast_id}</h1>" in forecast.text
    assert issued.forecast.fingerprint in forecast.text
    assert missing.status_code == 404 and "<h1>404 " in missing.text
    assert "<h2>Forecast ledger</h2>" in page
    assert "<h3>Monitoring of the champion, Drift</h3>" in page
    forecast_url = f"/pages/forecasts/{issued.forecast_id}"
    assert f'<tr><td class="num"><a href="{forecast_url}">{issued.forecast_id}</a></td>' in page
    assert 'aria-label="sales/north: Drift, forecast from 2021-12"' in page


def _cells(page: str, first: str) -> list[str]:
    row = re.search(rf"<tr><td[^>]*>{re.escape(first)}</td>.*?</tr>", page)[0]
    return re.findall(r"<td[^>]*>(.*?)</td>", row)


def test_a_forecast_page_shows_each_step_beside_its_actual_and_every_outcome_set(sessions):
    with sessions() as session:  # closed without a commit
        oldest = load_ledger(session, KEY).issued[-1].record
        first = forecast_detail(load_forecast_page(session, oldest.forecast_id))
        corrected = shifted(48).values.copy()
        corrected[36] += 5.0  # a correction of the first target period
        version = save_series_version(session, make_series(KEY, "P1M", zip(
            shifted(48).labels(), corrected)), actor=ACTOR).version
        rescored = score_outcomes(oldest.forecast, load_series(session, version.id))
        record_outcomes(session, forecast_id=oldest.forecast_id,
                        series_version_id=version.id, outcomes=rescored, actor="worker-1")
        view = load_forecast_page(session, oldest.forecast_id)
        second = forecast_detail(view)
    f, actuals = oldest.forecast, shifted(48)
    assert f.fingerprint in first and f"{f.periods[0]} to {f.periods[-1]}" in first
    for step, period in enumerate(f.periods):
        cells = _cells(first, str(step + 1))
        actual = float(actuals.values[actuals.labels().index(period)])
        assert cells[1:3] == [period, fixed(f.point[step])]
        assert cells[3:5] == [  # one cell per level, e.g. "80 %: 187.500 – 201.000"
            f"{level} %: {fixed(f.lower[level][step])} – {fixed(f.upper[level][step])}"
            for level in (80, 95)]
        assert cells[5:7] == [fixed(actual), fixed(actual - f.point[step])]
    earlier, newest = view.sets
    assert earlier.version < newest.version == version.number
    assert _cells(second, "1")[5] == fixed(corrected[36])  # steps use the newest set
    expected = [fixed(realised_mase(s.outcomes.outcomes)) for s in view.sets]
    assert [_cells(second, str(s.version))[3] for s in view.sets] == expected
    assert "<svg" in second and 'id="forecast-fan-' in second


def test_a_forecast_not_yet_observed_says_so(sessions):
    with sessions() as session:
        newest = load_ledger(session, KEY).issued[0].record
        page = forecast_detail(load_forecast_page(session, newest.forecast_id))
    assert page.count("not yet observed") == len(newest.forecast.periods)
    assert "No outcomes yet" in page
    for name, value in newest.forecast.params.items():  # readable name, then the library's
        shown = readable(name, 12)
        assert (f'<td>{html.escape(shown)} <span class="mono lib">{html.escape(name)}</span>'
                f'</td><td class="num">{value:.6f}</td>') in page


def test_the_forecast_chart_shows_history_in_proportion_to_the_horizon(sessions):
    with sessions() as session:
        view = load_forecast_page(session, load_ledger(session, KEY).issued[0].record.forecast_id)
    f = view.record.forecast
    available = view.history.labels().index(f.origin) + 1
    default = history_window(len(f.periods), f.season_length)
    assert default == max(4 * len(f.periods), 12) < available
    assert f"The last {default} periods of history" in forecast_detail(view)
    assert f"The last {available} periods of history" in forecast_detail(view, 0)
    assert "The last 5 periods of history" in forecast_detail(view, 5)
    assert f'href="/pages/forecasts/{view.record.forecast_id}?history=0"' in forecast_detail(view)


def test_the_series_list_shows_the_champions_monitoring_state(sessions):
    with sessions() as session:
        flags = monitor_series(session, KEY).report.flags
        state = monitoring_state(session, KEY, current_champion(session, KEY))
        listed = series_list(session, state=state)
        others = [series_list(session, state=s) for s in STATES if s != state]
    expected = ("raised" if any(f.raised for f in flags) else
                "not enough data" if all(f.p_value is None for f in flags) else "clear")
    assert state == expected
    assert f'<a href="/pages/series/{KEY}">' in listed
    assert not any(f'<a href="/pages/series/{KEY}">' in page for page in others)
