"""The dossier's answer: storage's dossier turned into the API's rows, with realised
accuracy summarised beside the backtest's promise."""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np

from service.http.routes.runs import run_url
from service.http.schemas.dossier import (
    ChampionEntryOut,
    DossierOut,
    EventOut,
    ForecastEntryOut,
    JustificationOut,
    StepRow,
    VersionEntryOut,
)
from service.views.ledger_answers import forecast_url
from storage.ledger import ChampionEntry, Dossier, DossierForecast


def dossier_out(dossier: Dossier) -> DossierOut:
    """The JSON answer of a dossier."""
    series = dossier.series
    return DossierOut(
        series_key=series.key, unit=series.unit, frequency=series.frequency,
        season_length=series.season_length, as_of=dossier.as_of,
        champion=_champion(dossier.champion) if dossier.champion else None,
        champion_history=[_champion(entry) for entry in dossier.champions],
        versions=[VersionEntryOut(version=v.number, fingerprint=v.fingerprint, change=v.change,
                                  n_obs=v.n_obs, first_period=v.first_period,
                                  last_period=v.last_period, created_at=v.created_at,
                                  created_by=v.created_by) for v in dossier.versions],
        forecasts=[_forecast(f) for f in dossier.forecasts],
        events=[EventOut(seq=e.seq, occurred_at=e.occurred_at, actor=e.actor, action=e.action,
                         subject=e.subject, subject_label=dossier.subject_labels[e.subject],
                         digest=e.digest) for e in dossier.events])


def step_rows(dossier: Dossier) -> Iterator[StepRow]:
    """The CSV answer: one row per step of every issued forecast in the dossier."""
    for entry in dossier.forecasts:
        forecast, record = entry.record.forecast, entry.record
        known = {o.horizon: o for o in entry.outcomes}
        for h, (period, point) in enumerate(zip(forecast.periods, forecast.point), start=1):
            outcome = known.get(h)
            yield StepRow(
                series_key=record.series_key, forecast_id=record.forecast_id,
                issued_at=record.issued_at, issued_by=record.issued_by,
                candidate_id=forecast.candidate_id, candidate=forecast.label,
                series_version=entry.version_number, fingerprint=forecast.fingerprint,
                origin=forecast.origin, horizon=h, period=period, point=point,
                actual=outcome.actual if outcome else None,
                error=outcome.error if outcome else None,
                scaled_error=outcome.scaled_error if outcome else None,
                promised_mase=entry.promised_mase.get(h),
                hits=" ".join(f"{level}:{int(hit)}" for level, hit in sorted(
                    outcome.hits.items())) if outcome else None)


def _champion(entry: ChampionEntry) -> ChampionEntryOut:
    choice, found = entry.choice, entry.justification
    justification = None if found is None else JustificationOut(
        run_id=found.run_id, run_url=run_url(found.run_id), series_version=found.series_version,
        rank=found.rank, score=found.score, in_confidence_set=found.in_confidence_set,
        mase_by_horizon=found.mase_by_horizon)
    return ChampionEntryOut(choice_id=choice.choice_id, candidate_id=choice.candidate_id,
                            candidate=entry.label, reason=choice.reason,
                            chosen_by=choice.chosen_by, chosen_at=choice.chosen_at,
                            justification=justification)


def _forecast(entry: DossierForecast) -> ForecastEntryOut:
    record, forecast, outcomes = entry.record, entry.record.forecast, entry.outcomes
    horizons = [o.horizon for o in outcomes]
    promised = [entry.promised_mase[h] for h in horizons if h in entry.promised_mase]
    return ForecastEntryOut(
        forecast_id=record.forecast_id, url=forecast_url(record.forecast_id),
        issued_at=record.issued_at, issued_by=record.issued_by,
        candidate_id=forecast.candidate_id, candidate=forecast.label,
        series_version=entry.version_number, fingerprint=forecast.fingerprint,
        origin=forecast.origin, periods=list(forecast.periods), outcomes_known=len(outcomes),
        scored_on_version=entry.scored_on_version,
        realised_mase=float(np.mean([abs(o.scaled_error) for o in outcomes]))
        if outcomes else None,
        promised_mase=float(np.mean(promised)) if outcomes and len(promised) == len(horizons)
        else None,
        coverage={level: float(np.mean([o.hits[level] for o in outcomes]))
                  for level in forecast.levels} if outcomes else {})
