"""Terminal output for the command line: a progress bar and ranked tables."""

from __future__ import annotations

import sys
from collections.abc import Mapping, Sequence
from typing import Any, TextIO

from backtest.results import BacktestResult, SeriesResult
from backtest.tidy import ranking_rows
from service.views.ranking_text import common_ground, score_cell


class ProgressBar:
    """A one-line progress bar on a stream, redrawn at most once per percent."""

    def __init__(self, stream: TextIO = sys.stderr, width: int = 30) -> None:
        self.stream, self.width, self._shown = stream, width, -1

    def __call__(self, done: int, total: int) -> None:
        percent = 100 if total == 0 else done * 100 // total
        if percent == self._shown:
            return
        self._shown = percent
        filled = self.width * percent // 100
        bar = "#" * filled + "." * (self.width - filled)
        end = "\n" if done >= total else ""
        self.stream.write(f"\r  [{bar}] {done}/{total} folds{end}")
        self.stream.flush()


def _number(value: float | None, digits: int = 3) -> str:
    return "-" if value is None else f"{value:.{digits}f}"


def _flag(value: bool | None, yes: str, no: str) -> str:
    return "" if value is None else (yes if value else no)


def coverage_by_candidate(sr: SeriesResult) -> dict[str, dict[int, float | None]]:
    """Pooled empirical coverage per candidate and level."""
    out: dict[str, dict[int, float | None]] = {}
    for s in sr.scores:
        if s.metric == "coverage" and s.horizon is None and s.level is not None:
            out.setdefault(s.candidate_id, {})[s.level] = s.value
    return out


def ranking_table(title: str, rows: Sequence[Mapping[str, Any]], score_name: str,
                  coverage: Mapping[str, Mapping[int, float | None]] | None = None) -> str:
    """Ranked candidates of one series as a fixed-width table.

    ``rows`` carry the ranking columns of DEVELOPERS.md ("Output tables"), as the CLI's
    results and the API's run ranking both give them.
    """
    levels = sorted({lv for c in (coverage or {}).values() for lv in c})
    head = ["#", "candidate", score_name, "own folds", "ratio to bench",
            *[f"cover{lv}" for lv in levels], "signif.", "conf.set", "calibration", "failed",
            "not conv."]
    body = []
    for r in rows:
        cover = (coverage or {}).get(r["candidate_id"], {})
        body.append([
            "-" if r["rank"] is None else str(r["rank"]),
            r["candidate"] + (" (benchmark)" if r["is_benchmark"] else ""),
            score_cell(r, _number(r["score"])), _number(r.get("score_own_folds")),
            _number(r["ratio_to_benchmark"], 2),
            *[_number(cover.get(lv), 2) for lv in levels],
            _flag(r["beats_benchmark"], "better", "no"),
            _flag(r["in_confidence_set"], "in", "out"),
            r["calibration_zone"] or "", str(r["folds_failed"]),
            str(r["folds_not_converged"]),
        ])
    widths = [max(len(x) for x in col) for col in zip(head, *body)]
    lines = [title + common_ground(rows)]
    for row in [head, *body]:
        lines.append("  " + "  ".join(c.ljust(w) if i == 1 else c.rjust(w)
                                      for i, (c, w) in enumerate(zip(row, widths))))
    return "\n".join(lines)


def ranking_report(result: BacktestResult) -> str:
    """Ranked tables for every series of a result."""
    plan = result.plan
    where = "all horizons" if plan["rank_horizon"] is None else f"h={plan['rank_horizon']}"
    tables = []
    for sr, rows in zip(result.series, _rows_by_series(result)):
        title = (f"{sr.series['key']}  ({sr.series['n_obs']} obs, {sr.series['first_period']}.."
                 f"{sr.series['last_period']}; ranked by {plan['rank_by'].upper()} over {where})")
        tables.append(ranking_table(title, rows, plan["rank_by"].upper(),
                                    coverage_by_candidate(sr)))
    return "\n\n".join(tables)


def _rows_by_series(result: BacktestResult) -> list[list[dict[str, Any]]]:
    grouped: dict[str, list[dict[str, Any]]] = {}
    for row in ranking_rows(result):
        grouped.setdefault(row["series_key"], []).append(row)
    return [grouped[sr.series["key"]] for sr in result.series]
