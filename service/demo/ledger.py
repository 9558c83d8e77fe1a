"""The demo continued in time: champions, issued forecasts, later actuals, a drift flag.

After the backtest, the demo confirms each series' suggested champion, then lives through
six invented months of 2025: each month it issues three-month forecasts of the three
series the finance team publishes, from the data so far, then appends that month's
actuals. The worker scores the outcomes as they become due, and the
monitoring flags show which champion stopped living up to its backtest. On purpose, a new
energy tariff lifts cold-storage energy costs by a third from March 2025; the other
series carry on as before. Every figure is invented from a seed; every step is HTTP.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path
from typing import Any
from urllib.parse import quote

import httpx
import numpy as np

from backtest.demo import demo_series
from backtest.series import Series
from service.cli.dossier import dossier_lines
from service.cli.ledger_text import monitoring_lines
from service.http.schemas.dossier import DossierOut
from service.http.schemas.monitoring import FlagOut, MonitoringOut

MONTHS = 6
HORIZON = 3
PUBLISHED = ("sales/fresh-produce", "sales/catering", "costs/cold-storage-energy")
"""The series whose forecasts the finance team publishes."""
DRIFTING = "costs/cold-storage-energy"
SHIFT_FROM, SHIFT = 2, 1 / 3
"""From the third invented month the drifting series is a third higher."""
FIT_WINDOW = 48
SEED = 2025


def later_actuals(series: Series, months: int, rng: np.random.Generator) -> list[float]:
    """The next ``months`` values of a (positive) series, carrying on as it went: a
    log-linear trend and a monthly profile fitted to its last four years, with AR(1) noise
    continued from its last deviation."""
    y = np.log(np.asarray(series.values, dtype=float)[-FIT_WINDOW:])
    t = np.arange(len(y))
    design = _design(t, len(series) - len(y))
    coef, *_ = np.linalg.lstsq(design, y, rcond=None)
    deviation = y - design @ coef
    phi = float(np.clip(np.corrcoef(deviation[:-1], deviation[1:])[0, 1], 0.0, 0.95))
    sd = float(np.std(deviation[1:] - phi * deviation[:-1]))
    ahead = np.arange(len(y), len(y) + months)
    trend = _design(ahead, len(series) - len(y)) @ coef
    out, u = [], deviation[-1]
    for k in range(months):
        u = phi * u + rng.normal(0.0, sd)
        out.append(round(float(np.exp(trend[k] + u)), 2))
    return out


def continue_demo(client: httpx.Client, run_id: int, out: Path) -> int:
    """Choose champions from run ``run_id``'s suggestions and live through the months."""
    _choose_champions(client, run_id)
    series = [s for s in demo_series() if s.key in PUBLISHED]
    rng = np.random.default_rng(SEED)
    world = {s.key: later_actuals(s, MONTHS, rng) for s in series}
    world[DRIFTING] = [v * (1 + SHIFT) if k >= SHIFT_FROM else v
                       for k, v in enumerate(world[DRIFTING])]
    periods = [series[0].label(len(series[0]) + k) for k in range(MONTHS)]
    print(f"\nliving through {periods[0]}..{periods[-1]} (invented): each month "
          f"{HORIZON}-month forecasts are issued, then the month's actuals appended; from "
          f"{periods[SHIFT_FROM]} a new tariff lifts {DRIFTING} by a third")
    issued = []
    for k, period in enumerate(periods):
        issued += [_issue(client, s.key) for s in series]
        for s in series:
            _append(client, s.key, period, round(world[s.key][k], 2))
        print(f"  {period}: {len(series)} forecasts issued, actuals appended")
    _wait_for_outcomes(client, issued, periods[-1])
    return _report(client, out, len(issued))


def _choose_champions(client: httpx.Client, run_id: int) -> None:
    answer = client.get(f"/v1/runs/{run_id}/champion-suggestions")
    answer.raise_for_status()
    print(f"\nchampions confirmed from run {run_id}'s suggestions (best rank in the model "
          "confidence set):")
    for s in answer.json()["items"]:
        reason = (f"suggested by run {run_id}: rank {s['rank']} by its plan's score, "
                  f"{'in the model confidence set' if s['basis'] == 'confidence_set' else ''}")
        chosen = client.post(f"/v1/series/{quote(s['series_key'], safe='/')}/champion",
                             json={"candidate_id": s["candidate_id"], "run_id": run_id,
                                   "reason": reason.rstrip(", ")})
        chosen.raise_for_status()
        print(f"  {s['series_key']:<28} {s['candidate']}")


def _issue(client: httpx.Client, key: str) -> dict[str, Any]:
    answer = client.post("/v1/forecasts", json={"series_key": key, "horizon": HORIZON,
                                                "levels": [80, 95], "seed": 7})
    answer.raise_for_status()
    issued: dict[str, Any] = answer.json()
    return issued


def _append(client: httpx.Client, key: str, period: str, value: float) -> None:
    answer = client.post(f"/v1/series/{quote(key, safe='/')}/observations",
                         json={"observations": [{"period": period, "value": value}]})
    answer.raise_for_status()


def _wait_for_outcomes(client: httpx.Client, issued: list[dict[str, Any]], last: str,
                       timeout: float = 60.0) -> None:
    """Until every forecast's current outcomes cover its periods observed up to ``last``."""
    waiting = list(issued)
    deadline = time.monotonic() + timeout
    while waiting and time.monotonic() < deadline:
        waiting = [f for f in waiting if not _scored(client, f, last)]
        if waiting:
            time.sleep(0.2)
    if waiting:
        raise RuntimeError(f"{len(waiting)} forecasts were not scored within {timeout:.0f} s")


def _scored(client: httpx.Client, forecast: dict[str, Any], last: str) -> bool:
    due = sum(step["period"] <= last for step in forecast["steps"])
    sets = client.get(forecast["links"]["outcomes"]).json()["sets"]
    return bool(sets) and len(sets[0]["outcomes"]) == due and \
        max(o["period"] for o in sets[0]["outcomes"]) == min(last, forecast["steps"][-1]["period"])


def _report(client: httpx.Client, out: Path, issued: int) -> int:
    flags = client.get("/v1/monitoring").json()["items"]
    (out / "ledger.csv").write_text(client.get("/v1/forecasts", params={
        "format": "csv", "limit": 1000}).text)
    (out / "monitoring.csv").write_text(client.get("/v1/monitoring",
                                                   params={"format": "csv"}).text)
    print(f"\n{issued} forecasts issued and scored; monitoring flags of each champion:")
    by_series: dict[str, list[FlagOut]] = {}
    for row in flags:
        by_series.setdefault(row["series_key"], []).append(FlagOut(**row))
    for key, series_flags in by_series.items():
        raised = [f.rule for f in series_flags if f.state == "raised"]
        untested = [f.rule for f in series_flags if f.state == "not_enough_data"]
        verdict = "RAISED: " + ", ".join(raised) if raised else "clear"
        print(f"  {key:<28} {verdict}"
              + (f"; not enough data: {', '.join(untested)}" if untested else ""))
    drifting = MonitoringOut(**client.get(
        f"/v1/series/{quote(DRIFTING, safe='/')}/monitoring").json())
    print("\n" + "\n".join(monitoring_lines(drifting)))
    _ask_the_auditors_question(client)
    print(f"\nledger CSV: {out / 'ledger.csv'}; flags CSV: {out / 'monitoring.csv'}")
    if not drifting.raised:
        print(f"foldline: error: the drift of {DRIFTING} raised no flag", file=sys.stderr)
        return 1
    return 0


def _ask_the_auditors_question(client: httpx.Client) -> None:
    """Which model did we trust for the drifting line in March, why, and how did the
    forecasts for March fare? One request: the series dossier."""
    url = f"/v1/series/{quote(DRIFTING, safe='/')}/dossier"
    params = {"target_from": "2025-03", "target_to": "2025-03", "limit": "8"}
    started = time.perf_counter()
    answer = client.get(url, params=params)
    elapsed = time.perf_counter() - started
    answer.raise_for_status()
    query = "&".join(f"{k}={v}" for k, v in params.items())
    print(f"\nthe auditor's question, in one request: GET {url}?{query} "
          f"({elapsed * 1000:.0f} ms)")
    print("\n".join("  " + line for line in dossier_lines(DossierOut(**answer.json()))))


def _design(t: np.ndarray, start: int) -> np.ndarray:
    months = (t + start) % 12
    dummies = np.stack([months == m for m in range(1, 12)], axis=1).astype(float)
    return np.column_stack([np.ones(len(t)), t, dummies])
