"""The overview of a run with more series than the report details: every series' top
candidate, score and ratio to the benchmark from the stored ranking rows, with each
series' page named."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from service.views.report.html import Html, element, join, table
from service.views.report.numbers import MISSING, fixed
from service.views.report.ranking import score_name

HEADER = ["series", "version", "top candidate", "score", "ratio to benchmark",
          "in confidence set", "calibration at h = 1", "folds ok / failed"]


def overview_section(rows: Sequence[Mapping[str, Any]], plan: Mapping[str, Any],
                     detailed: Sequence[str]) -> Html:
    """Every series of the run, one line each, in run order; ``detailed`` names the series
    the report goes on to show in full."""
    by_series: dict[str, list[Mapping[str, Any]]] = {}
    for row in rows:
        by_series.setdefault(row["series_key"], []).append(row)
    lines = [_line(key, ranking) for key, ranking in by_series.items()]
    note = (f"The run has {len(by_series)} series; the sections after this table show the "
            f"first {len(detailed)} in run order in full ({', '.join(detailed)}). For every "
            "other series, this line is what its stored ranking says; its full ranking, "
            "charts and folds are on its page (/pages/series/KEY) and in the API "
            "(/v1/runs/ID/ranking, /v1/runs/ID/folds). Ranked by "
            f"{score_name(plan)}; the ratio to the benchmark is the top candidate's score "
            "divided by the benchmark's: lower is better, below 1 beats it.")
    return join([element("h2", "Every series"), element("p", note, cls="note"),
                 table(HEADER, lines, numeric=(1, 3, 4), cls="overview")])


def _line(key: str, ranking: Sequence[Mapping[str, Any]]) -> list[object]:
    top = next((r for r in ranking if r["rank"] == 1), None)
    failed = sum(r["folds_failed"] for r in ranking)
    ok = sum(r["folds_ok"] for r in ranking)
    in_set = sum(bool(r["in_confidence_set"]) for r in ranking)
    if top is None:
        return [key, ranking[0]["series_version"], "no candidate ranked", MISSING, MISSING,
                f"{in_set} of {len(ranking)}", MISSING, f"{ok} / {failed}"]
    label = top["candidate"] + (" (benchmark)" if top["is_benchmark"] else "")
    return [key, top["series_version"], label, fixed(top["score"]),
            MISSING if top["is_benchmark"] else fixed(top["ratio_to_benchmark"]),
            f"{in_set} of {len(ranking)}", top["calibration_zone"] or MISSING,
            f"{ok} / {failed}"]
