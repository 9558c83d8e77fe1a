"""Terminal output for the command line: a progress bar and ranked tables."""

from __future__ import annotations

import sys
from typing import TextIO

from backtest.results import BacktestResult, SeriesResult


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


def _pooled(sr: SeriesResult, candidate_id: str, metric: str, level: int) -> float | None:
    return next((s.value for s in sr.scores if s.candidate_id == candidate_id
                 and s.metric == metric and s.level == level and s.horizon is None), None)


def ranking_table(sr: SeriesResult, plan: dict) -> str:
    """The ranked candidates of one series as a fixed-width text table."""
    score = plan["rank_by"].upper()
    where = "all horizons" if plan["rank_horizon"] is None else f"h={plan['rank_horizon']}"
    levels = plan["levels"]
    head = ["#", "candidate", score, "vs bench", *[f"cover{lv}" for lv in levels],
            "signif.", "conf.set", "calibration", "failed"]
    rows = []
    for r in sr.ranking:
        rows.append([
            "-" if r.rank is None else str(r.rank),
            r.label + (" (benchmark)" if r.is_benchmark else ""),
            _number(r.score), _number(r.skill, 2),
            *[_number(_pooled(sr, r.candidate_id, "coverage", lv), 2) for lv in levels],
            _flag(r.beats_benchmark, "better", "no"), _flag(r.in_confidence_set, "in", "out"),
            r.calibration_zone or "", str(r.folds_failed),
        ])
    widths = [max(len(x) for x in col) for col in zip(head, *rows)]
    lines = [f"{sr.series['key']}  ({sr.series['n_obs']} obs, {sr.series['first_period']}.."
             f"{sr.series['last_period']}; ranked by {score} over {where})"]
    for row in [head, *rows]:
        lines.append("  " + "  ".join(c.ljust(w) if i == 1 else c.rjust(w)
                                      for i, (c, w) in enumerate(zip(row, widths))))
    return "\n".join(lines)


def ranking_report(result: BacktestResult) -> str:
    """Ranked tables for every series of a result."""
    return "\n\n".join(ranking_table(sr, result.plan) for sr in result.series)
