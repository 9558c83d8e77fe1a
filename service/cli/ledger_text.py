"""Champions, issued forecasts, outcomes and monitoring as plain text for the terminal."""

from __future__ import annotations

from collections.abc import Iterable, Iterator, Sequence

from service.http.schemas.forecasts import ForecastOut, OutcomeSetOut
from service.http.schemas.monitoring import FlagOut, MonitoringOut
from service.usecases.champions import ChampionChoice, Suggestion


def champion_lines(choices: Iterable[ChampionChoice]) -> Iterator[str]:
    """One line per choice: when, who, which candidate, which run, why."""
    for c in choices:
        run = f"run {c.run_id}" if c.run_id is not None else "no run"
        yield (f"{c.chosen_at:%Y-%m-%d %H:%M}Z  {c.series_key}  {c.candidate_id}  ({run}, "
               f"chosen by {c.chosen_by}): {c.reason}")


def suggestion_lines(found: Iterable[Suggestion]) -> Iterator[str]:
    """One line per series: the suggested candidate and the current champion."""
    for s in found:
        score = "-" if s.score is None else f"{s.score:.3f}"
        now = s.current_champion or "none"
        yield (f"{s.series_key}  {s.candidate_id}  {s.candidate}  (rank {s.rank}, score "
               f"{score}, by {s.basis}; champion now: {now})")


def forecast_lines(out: ForecastOut) -> Iterator[str]:
    """A header line, then one line per step with its interval bounds."""
    yield (f"forecast {out.id}: {out.series_key} v{out.series_version} by {out.candidate} "
           f"({out.candidate_id}), from {out.origin}, issued {out.issued_at:%Y-%m-%d %H:%M}Z "
           f"by {out.issued_by}")
    for step in out.steps:
        bounds = "  ".join(f"{lv}%: {_num(step.lower[str(lv)])} .. {_num(step.upper[str(lv)])}"
                           for lv in out.levels)
        yield f"  h={step.horizon:<3} {step.period}  {_num(step.point)}  {bounds}"


def outcome_lines(sets: Sequence[OutcomeSetOut]) -> Iterator[str]:
    """Per set: the version it was scored against, then one line per step."""
    if not sets:
        yield "no outcomes yet: no target period has an actual"
    for found in sets:
        mark = " (current)" if found.current else ""
        yield f"against version {found.series_version}{mark}, scored " \
              f"{found.scored_at:%Y-%m-%d %H:%M}Z"
        for o in found.outcomes:
            hits = " ".join(f"{lv}%:{'in' if hit else 'OUT'}" for lv, hit in o.hits.items())
            yield (f"  h={o.horizon:<3} {o.period}  actual {_num(o.actual)}  forecast "
                   f"{_num(o.point)}  error {_num(o.error)}  scaled {_num(o.scaled_error)}  "
                   f"{hits}")


def monitoring_lines(out: MonitoringOut) -> Iterator[str]:
    """The candidate, its realised accuracy beside the expectation, and its flags."""
    role = "champion" if out.is_champion else "candidate"
    yield f"{out.series_key}: {role} {out.candidate_id}, {out.forecasts} issued forecast(s)"
    if out.expectation is not None:
        expected = ", ".join(f"h{h} {_num(v)}" for h, v in out.expectation.mase_by_horizon.items())
        yield f"  backtest (run {out.expectation.run_id}) MASE by horizon: {expected}"
    for point in out.realised:
        cover = " ".join(f"{lv}%:{_num(v, 2)}" for lv, v in point.coverage.items())
        yield (f"  {point.period}  {point.count} outcome(s)  MASE {_num(point.mase)}  "
               f"coverage {cover}")
    yield from flag_lines(out.flags)


def flag_lines(flags: Iterable[FlagOut]) -> Iterator[str]:
    """One line per rule: its state (RAISED, clear, not enough data), and why."""
    for flag in flags:
        level = f" {flag.level}%" if flag.level is not None else ""
        yield f"  {flag_state(flag.state, flag.outcomes, flag.needed)}  {flag.rule}{level}: " \
              f"{flag.detail}"


def flag_state(state: str, outcomes: int, needed: int) -> str:
    """A flag's state in words: ``RAISED``, ``clear``, or ``not enough data (3 of 12)``
    (one-step outcomes had of those needed)."""
    if state == "raised":
        return "RAISED"
    if state == "clear":
        return "clear"
    return "not enough data" + (f" ({outcomes} of {needed})" if outcomes < needed else "")


def _num(value: float | None, digits: int = 3) -> str:
    return "-" if value is None else f"{value:.{digits}f}"
