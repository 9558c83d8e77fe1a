"""What was run: the run's facts, the plan, the series versions, candidates and software."""

from __future__ import annotations

import json
from collections.abc import Mapping
from typing import Any

import matplotlib

from backtest.results import BacktestResult
from service.views.report.html import Html, element, join, table
from service.views.report.numbers import MISSING

_PLAN_WORDING = {
    "horizon": "horizon (steps ahead)",
    "first_origin": "first origin",
    "step": "periods between origins",
    "max_origins": "latest origins kept",
    "window": "estimation window",
    "refit": "re-estimate every (origins)",
    "warm_start": "warm start",
    "assessment": "model assessment (full, or lean: no standard errors or full-series fit)",
    "estimator": "ARIMA and ETS estimator (fast: compiled; reference: statsmodels' optimiser)",
    "levels": "interval levels (%)",
    "seed": "seed",
    "benchmark": "benchmark",
    "rank_by": "ranked by",
    "rank_horizon": "ranking horizon (empty: all)",
}


def shown(value: Any) -> str:
    """A fact as text: timestamps in ISO form, yes/no, structures as JSON, blanks as a dash."""
    if value is None or value == "":
        return MISSING
    if isinstance(value, bool):
        return "yes" if value else "no"
    if hasattr(value, "isoformat"):
        stamp: str = value.isoformat(sep=" ", timespec="seconds")
        return stamp
    if isinstance(value, Mapping | list | tuple):
        return json.dumps(value, sort_keys=True, separators=(", ", ": "))
    return str(value)


def what_was_run(result: BacktestResult, run_meta: Mapping[str, Any]) -> Html:
    """The provenance section."""
    facts = [("run", run_meta.get("run_id")), ("status", run_meta.get("status")),
             ("requested by", run_meta.get("requested_by")),
             ("queued", run_meta.get("queued_at")), ("started", run_meta.get("started_at")),
             ("finished", run_meta.get("finished_at")), ("seed", result.plan.get("seed")),
             ("compute time (s)", _seconds(result.timing))]
    if run_meta.get("failure_reason"):
        facts.append(("failure reason", run_meta["failure_reason"]))
    return join([
        element("h2", "What was run"),
        table(None, [(name, shown(value)) for name, value in facts], cls="facts"),
        element("h3", "Plan"),
        table(["setting", "value"], [(_PLAN_WORDING.get(k, k), shown(v))
                                     for k, v in result.plan.items()], cls="facts"),
        element("h3", "Series versions"),
        _versions(result, run_meta),
        element("h3", "Candidates"),
        _candidates(result),
        element("h3", "Software"),
        table(["component", "version"],
              [*sorted(result.software.items()), ("matplotlib (this report)",
                                                  matplotlib.__version__)], cls="facts"),
    ])


def _seconds(timing: Mapping[str, float]) -> str | None:
    return None if "seconds" not in timing else f"{timing['seconds']:.1f}"


def _versions(result: BacktestResult, run_meta: Mapping[str, Any]) -> Html:
    """Every series version of the run (``run_meta["versions"]``, else those in ``result``),
    with its data's facts where the report holds its results."""
    facts = {sr.series["fingerprint"]: sr.series for sr in result.series}
    listed = run_meta.get("versions") or [{"fingerprint": f} for f in facts]
    units = run_meta.get("units", {})
    rows = []
    for version in listed:
        s = facts.get(version["fingerprint"])
        key = s["key"] if s else version.get("key")
        described = ((s["frequency"], s["n_obs"], f"{s['first_period']} .. {s['last_period']}")
                     if s else (MISSING, MISSING, MISSING))
        rows.append((shown(key), shown(version.get("number")), *described,
                     shown(units.get(key)),
                     element("span", version["fingerprint"], cls="mono")))
    return table(["series", "version", "frequency", "obs.", "periods", "unit",
                  "fingerprint (SHA-256)"], rows, numeric=(1, 3))


def _candidates(result: BacktestResult) -> Html:
    seen: dict[str, tuple[str, str, str]] = {}
    for sr in result.series:
        for c in sr.candidates:
            role = "benchmark (added by the plan)" if c.added_as_benchmark else (
                "benchmark" if c.candidate_id == sr.benchmark_id else "candidate")
            seen.setdefault(c.candidate_id, (c.label, role, shown(c.spec)))
    rows = [(element("span", cid, cls="mono"), label, role, element("span", spec, cls="mono"))
            for cid, (label, role, spec) in seen.items()]
    return table(["id", "label (on the first series)", "role", "specification"], rows)
