"""Champion choices, issued forecasts, outcomes and monitoring reports as answer models and
flat rows, for the API and the command line alike."""

from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from typing import Any

from backtest.ledger import MonitoringReport
from service.http.routes.series import series_url
from service.http.schemas.champions import ChampionRow
from service.http.schemas.forecasts import (
    ForecastLinks,
    ForecastOut,
    OutcomeOut,
    OutcomeSetOut,
    StepOut,
)
from service.http.schemas.monitoring import ExpectationOut, FlagOut, MonitoringOut, RealisedOut
from service.usecases.monitoring import Monitored
from storage.ledger import ChampionChoice, IssuedRecord, OutcomeSet


def forecast_url(forecast_id: int) -> str:
    """The URL of an issued forecast."""
    return f"/v1/forecasts/{forecast_id}"


def champion_row(choice: ChampionChoice) -> ChampionRow:
    return ChampionRow(series_key=choice.series_key, choice_id=choice.choice_id,
                       candidate_id=choice.candidate_id, candidate=choice.candidate_label,
                       run_id=choice.run_id,
                       reason=choice.reason, chosen_by=choice.chosen_by,
                       chosen_at=choice.chosen_at)


def forecast_out(record: IssuedRecord, version: int) -> ForecastOut:
    """An issued forecast; ``version`` is the number of the version it was fitted on."""
    f = record.forecast
    steps = [StepOut(horizon=h, period=period, point=f.point[h - 1],
                     lower={str(lv): f.lower[lv][h - 1] for lv in f.levels},
                     upper={str(lv): f.upper[lv][h - 1] for lv in f.levels})
             for h, period in enumerate(f.periods, start=1)]
    url = forecast_url(record.forecast_id)
    return ForecastOut(
        id=record.forecast_id, url=url, series_key=record.series_key, series_version=version,
        fingerprint=f.fingerprint, candidate_id=f.candidate_id, candidate=f.label,
        candidate_spec=f.candidate_spec, origin=f.origin, horizon=f.horizon,
        levels=list(f.levels), seed=f.seed, steps=steps, params=f.params, scale=f.scale,
        scale_sq=f.scale_sq, software=f.software, warnings=list(f.warnings),
        issued_by=record.issued_by, issued_at=record.issued_at,
        links=ForecastLinks(outcomes=f"{url}/outcomes", series=series_url(record.series_key),
                            monitoring=f"{series_url(record.series_key)}/monitoring"
                                       f"?candidate_id={f.candidate_id}"))


def forecast_rows(out: ForecastOut, horizon: int | None = None) -> Iterator[dict[str, Any]]:
    """The flat ledger rows of a forecast: one per step (only ``horizon`` if given) and level."""
    for step in out.steps:
        if horizon is not None and step.horizon != horizon:
            continue
        for level in out.levels:
            yield {"forecast_id": out.id, "series_key": out.series_key,
                   "series_version": out.series_version, "candidate_id": out.candidate_id,
                   "candidate": out.candidate, "issued_at": out.issued_at,
                   "issued_by": out.issued_by, "origin": out.origin, "horizon": step.horizon,
                   "period": step.period, "point": step.point, "level": level,
                   "lower": step.lower[str(level)], "upper": step.upper[str(level)]}


def outcome_set_out(found: OutcomeSet, version: int, current: bool) -> OutcomeSetOut:
    """One set of outcomes; ``version`` is the number of the version it was scored against."""
    return OutcomeSetOut(series_version=version, scored_at=found.scored_at, current=current,
                         outcomes=[OutcomeOut(
                             horizon=o.horizon, period=o.period, actual=o.actual,
                             point=o.point, error=o.error, scaled_error=o.scaled_error,
                             smape_term=o.smape_term,
                             hits={str(lv): hit for lv, hit in o.hits.items()},
                             interval_scores={str(lv): s for lv, s in o.interval_scores.items()})
                             for o in found.outcomes])


def outcome_rows(forecast: ForecastOut, sets: list[OutcomeSetOut]) -> Iterator[dict[str, Any]]:
    """The flat outcome rows: one per set, step and level."""
    for found in sets:
        for o in found.outcomes:
            for level in forecast.levels:
                yield {"forecast_id": forecast.id, "series_key": forecast.series_key,
                       "candidate_id": forecast.candidate_id,
                       "series_version": found.series_version, "scored_at": found.scored_at,
                       "horizon": o.horizon, "period": o.period, "actual": o.actual,
                       "point": o.point, "error": o.error, "scaled_error": o.scaled_error,
                       "smape_term": o.smape_term, "level": level,
                       "hit": o.hits.get(str(level)),
                       "interval_score": o.interval_scores.get(str(level))}


def monitoring_out(monitored: Monitored) -> MonitoringOut:
    """A monitoring report as answered."""
    report = monitored.report
    return MonitoringOut(
        series_key=report.series_key, candidate_id=report.candidate_id,
        candidate=monitored.candidate_label, is_champion=monitored.is_champion,
        forecasts=monitored.forecasts,
        realised=[RealisedOut(period=p.period, count=p.count, horizons=list(p.horizons),
                              mase=p.mase, expected_mase=p.expected_mase, smape=p.smape,
                              coverage=_by_level(p.coverage),
                              interval_score=_by_level(p.interval_score))
                  for p in report.realised],
        expectation=_expectation(report), flags=flag_outs(report),
        raised=[flag.rule for flag in report.flags if flag.state == "raised"],
        not_enough_data=[flag.rule for flag in report.flags
                         if flag.state == "not_enough_data"])


def flag_outs(report: MonitoringReport) -> list[FlagOut]:
    return [FlagOut(rule=f.rule, state=f.state, level=f.level, statistic=f.statistic,
                    p_value=f.p_value, threshold=f.threshold, first_period=f.first_period,
                    detail=f.detail, outcomes=f.outcomes, needed=f.needed)
            for f in report.flags]


def flag_rows(monitored: Monitored) -> Iterator[dict[str, Any]]:
    """The monitoring table's rows of one report: one per rule."""
    report = monitored.report
    for flag in flag_outs(report):
        yield {"series_key": report.series_key, "candidate_id": report.candidate_id,
               "candidate": monitored.candidate_label, **flag.model_dump()}


def realised_rows(out: MonitoringOut) -> Iterator[dict[str, Any]]:
    """The monitoring CSV of one series: one row per period and level."""
    for point in out.realised:
        levels: Sequence[int | None] = sorted(int(lv) for lv in point.coverage) or [None]
        for level in levels:
            yield {"series_key": out.series_key, "candidate_id": out.candidate_id,
                   "candidate": out.candidate, "period": point.period, "count": point.count,
                   "mase": point.mase,
                   "expected_mase": point.expected_mase, "smape": point.smape, "level": level,
                   "coverage": None if level is None else point.coverage.get(str(level)),
                   "interval_score": None if level is None
                   else point.interval_score.get(str(level))}


def _expectation(report: MonitoringReport) -> ExpectationOut | None:
    e = report.expectation
    if e is None:
        return None
    return ExpectationOut(candidate_id=e.candidate_id, run_id=e.run_id,
                          mase_by_horizon=_by_level(e.mase_by_horizon),
                          coverage_by_level=_by_level(e.coverage_by_level))


def _by_level(values: Mapping[int, float]) -> dict[str, float | None]:
    return {str(key): value for key, value in values.items()}
