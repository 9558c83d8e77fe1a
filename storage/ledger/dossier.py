"""A series' dossier: what was true about one series at a point in time, in one read.

It gathers, for an auditor, the champion choices with the runs that justified them, the
series versions with their fingerprints, the forecasts issued with their outcomes and the
backtest's promise beside them, and the audit events that touched the series. Every record
is append-only and time-stamped, so the dossier "as of" a time is a filter on those stamps,
never a copy: a choice made, a version saved, a forecast issued or an outcome set scored
after ``as_of`` is left out, and so is every audit event after it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import datetime

from sqlalchemy import select
from sqlalchemy.orm import Session

from backtest.errors import SeriesError
from backtest.frequency import parse_frequency
from backtest.ledger.outcomes import Outcome
from storage.audit import (
    AuditEntry,
    champion_subject,
    describe_subjects,
    entry_of,
    issued_subject,
    outcomes_subject,
    series_subject,
    unit_subject,
    version_subject,
)
from storage.db import (
    AuditEvent,
    IssuedForecastRecord,
    RankRecord,
    RunSeries,
    ScoreRecord,
    SeriesRecord,
    SeriesVersion,
)
from storage.errors import translates_errors
from storage.ledger.champions import ChampionChoice, champion_history
from storage.ledger.forecasts import IssuedRecord, issued_records
from storage.ledger.outcomes import SETS, outcome_sets
from storage.series import SeriesInfo, VersionInfo, get_series, list_versions


@dataclass(frozen=True)
class ForecastWindow:
    """Which issued forecasts a dossier shows: issue times in ``[issued_from, issued_to)``,
    origins and target periods between the given period labels (inclusive, compared as
    periods of the series' frequency, so ``2025-Q1`` and ``2025-01`` name the same quarter);
    ``None`` does not filter. A forecast is shown when any of its target periods is in the
    window."""

    issued_from: datetime | None = None
    issued_to: datetime | None = None
    origin_from: str | None = None
    origin_to: str | None = None
    target_from: str | None = None
    target_to: str | None = None


@dataclass(frozen=True)
class Justification:
    """What the run behind a champion choice said of the chosen candidate."""

    run_id: int
    series_version: int
    rank: int | None
    score: float | None
    in_confidence_set: bool | None
    mase_by_horizon: dict[int, float]


@dataclass(frozen=True)
class ChampionEntry:
    """A champion choice with the candidate's label and the evidence of its run."""

    choice: ChampionChoice
    label: str
    justification: Justification | None


@dataclass(frozen=True)
class DossierForecast:
    """An issued forecast with its outcomes as scored by ``as_of`` and the backtest's
    MASE by horizon that the champion in force at issue time promised (``{}``: none)."""

    record: IssuedRecord
    version_number: int
    outcomes: tuple[Outcome, ...]
    scored_on_version: int | None
    promised_mase: dict[int, float]


@dataclass(frozen=True)
class Dossier:
    """One series as it stood at ``as_of``."""

    series: SeriesInfo
    as_of: datetime
    champion: ChampionEntry | None
    champions: tuple[ChampionEntry, ...]
    versions: tuple[VersionInfo, ...]
    forecasts: tuple[DossierForecast, ...]
    events: tuple[AuditEntry, ...]
    subject_labels: dict[str, str]


@translates_errors
def series_dossier(session: Session, series_key: str, *, as_of: datetime,
                   window: ForecastWindow, limit: int) -> Dossier:
    """The dossier of ``series_key`` as of ``as_of``; at most ``limit`` forecasts (the
    latest issued) and ``limit`` audit events (the latest). Raises
    :class:`~storage.errors.NotFoundError` for an unknown series."""
    series = get_series(session, series_key)
    versions = tuple(v for v in list_versions(session, series_key) if v.created_at <= as_of)
    numbers = {v.id: v.number for v in list_versions(session, series_key)}
    champions = tuple(_entry(session, choice, numbers)
                      for choice in champion_history(session, series_key)
                      if choice.chosen_at <= as_of)
    forecasts = _forecasts(session, series_key, as_of, _Bounds(series.frequency, window),
                           limit, champions, numbers)
    events = _events(session, series_key, as_of, limit)
    return Dossier(series, as_of, champions[-1] if champions else None, champions, versions,
                   forecasts, events, describe_subjects(session, (e.subject for e in events)))


def _entry(session: Session, choice: ChampionChoice, numbers: dict[int, int]) -> ChampionEntry:
    return ChampionEntry(choice, choice.candidate_label,
                         _justification(session, choice, numbers))


def _justification(session: Session, choice: ChampionChoice,
                   numbers: dict[int, int]) -> Justification | None:
    if choice.run_id is None:
        return None
    version_id = session.scalar(select(RunSeries.series_version_id).where(
        RunSeries.run_id == choice.run_id, RunSeries.series_version_id.in_(numbers)))
    if version_id is None:
        return None
    rank = session.execute(select(RankRecord).where(
        RankRecord.run_id == choice.run_id, RankRecord.series_version_id == version_id,
        RankRecord.candidate_id == choice.candidate_id)).scalar_one_or_none()
    by_horizon = session.execute(select(ScoreRecord.horizon, ScoreRecord.value).where(
        ScoreRecord.run_id == choice.run_id, ScoreRecord.series_version_id == version_id,
        ScoreRecord.candidate_id == choice.candidate_id, ScoreRecord.metric == "mase",
        ScoreRecord.horizon.is_not(None), ScoreRecord.value.is_not(None),
        ScoreRecord.level.is_(None)))
    return Justification(choice.run_id, numbers[version_id],
                         rank.rank if rank else None, rank.score if rank else None,
                         rank.in_confidence_set if rank else None,
                         {int(h): float(v) for h, v in by_horizon})


class _Bounds:
    """A forecast window's period bounds as grid positions of the series' frequency."""

    def __init__(self, duration: str, window: ForecastWindow) -> None:
        self.window, self.frequency = window, parse_frequency(duration)
        self.origin = self._range("origin", window.origin_from, window.origin_to)
        self.target = self._range("target", window.target_from, window.target_to)

    def _range(self, name: str, low: str | None, high: str | None) -> tuple[float, float]:
        return (self._position(f"{name}_from", low, -math.inf),
                self._position(f"{name}_to", high, math.inf))

    def _position(self, name: str, label: str | None, default: float) -> float:
        if label is None:
            return default
        try:
            return self.frequency.position(label)
        except SeriesError as exc:
            raise SeriesError(f"{name}: {exc} ({self.frequency.duration} series)") from None

    def holds(self, record: IssuedRecord) -> bool:
        origin = self.frequency.position(record.forecast.origin)
        if not self.origin[0] <= origin <= self.origin[1]:
            return False
        return any(self.target[0] <= self.frequency.position(p) <= self.target[1]
                   for p in record.forecast.periods)


def _forecasts(session: Session, series_key: str, as_of: datetime, window: _Bounds,
               limit: int, champions: tuple[ChampionEntry, ...],
               numbers: dict[int, int]) -> tuple[DossierForecast, ...]:
    f = IssuedForecastRecord
    conditions = [f.series_id == select(SeriesRecord.id).where(SeriesRecord.key == series_key)
                  .scalar_subquery(), f.issued_at <= as_of]
    if window.window.issued_from is not None:
        conditions.append(f.issued_at >= window.window.issued_from)
    if window.window.issued_to is not None:
        conditions.append(f.issued_at < window.window.issued_to)
    chosen = [r for r in issued_records(session, conditions, by_issue_time=True)
              if window.holds(r)][-limit:]
    return tuple(_dossier_forecast(session, record, as_of, champions, numbers)
                 for record in chosen)


def _dossier_forecast(session: Session, record: IssuedRecord, as_of: datetime,
                      champions: tuple[ChampionEntry, ...],
                      numbers: dict[int, int]) -> DossierForecast:
    scored = [s for s in outcome_sets(session, record.forecast_id) if s.scored_at <= as_of]
    newest = scored[-1] if scored else None
    in_force = [c for c in champions if c.choice.chosen_at <= record.issued_at
                and c.choice.candidate_id == record.forecast.candidate_id]
    promise = in_force[-1].justification if in_force else None
    return DossierForecast(record, numbers[record.series_version_id],
                           newest.outcomes if newest else (),
                           numbers.get(newest.series_version_id) if newest else None,
                           promise.mase_by_horizon if promise else {})


def _events(session: Session, series_key: str, as_of: datetime,
            limit: int) -> tuple[AuditEntry, ...]:
    """The latest ``limit`` audit events on the series, its versions, results, champion
    choices and issued forecasts (with their outcome sets), oldest first."""
    series_id = session.execute(select(SeriesRecord.id)
                                .where(SeriesRecord.key == series_key)).scalar_one()
    version_ids = list(session.scalars(select(SeriesVersion.id)
                                       .where(SeriesVersion.series_id == series_id)))
    units = session.execute(select(RunSeries.run_id, RunSeries.series_version_id)
                            .where(RunSeries.series_version_id.in_(version_ids)))
    choice_ids = [c.choice_id for c in champion_history(session, series_key)]
    forecast_ids = list(session.scalars(select(IssuedForecastRecord.id)
                                        .where(IssuedForecastRecord.series_id == series_id)))
    scored = session.execute(select(SETS.c.forecast_id, SETS.c.series_version_id)
                             .where(SETS.c.forecast_id.in_(forecast_ids)))
    subjects = ([series_subject(series_id)] + [version_subject(v) for v in version_ids]
                + [unit_subject(run, version) for run, version in units]
                + [champion_subject(c) for c in choice_ids]
                + [issued_subject(f) for f in forecast_ids]
                + [outcomes_subject(f, v) for f, v in scored])
    query = (select(AuditEvent)
             .where(AuditEvent.subject.in_(subjects), AuditEvent.occurred_at <= as_of)
             .order_by(AuditEvent.seq.desc()).limit(limit))
    return tuple(reversed([entry_of(event) for event in session.scalars(query)]))
