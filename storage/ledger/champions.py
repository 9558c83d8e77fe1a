"""Champions: the candidate chosen to forecast a series, and the history of that choice.

Choosing is appending a row: who chose which candidate, when, why, and optionally the run
whose results justified it (that run must have backtested the candidate on the series).
A series' champion is its latest choice; nothing is overwritten.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from typing import Any

from sqlalchemy import ColumnElement, Select, exists, func, select
from sqlalchemy.orm import Session

from backtest.candidates import parse_candidate
from storage.audit import as_row, champion_digest, champion_subject, lock_audit_log, record_event
from storage.db import (
    CandidateRecord,
    ChampionChoiceRecord,
    ResultCandidate,
    Run,
    RunCandidate,
    RunSeries,
    SeriesRecord,
    SeriesVersion,
    utc_now,
)
from storage.errors import ConflictError, NotFoundError, translates_errors


@dataclass(frozen=True)
class ChampionChoice:
    """One choice of a series' champion."""

    choice_id: int
    series_key: str
    candidate_id: str
    candidate_label: str
    run_id: int | None
    reason: str
    chosen_by: str
    chosen_at: datetime


@translates_errors
def choose_champion(session: Session, *, series_key: str, candidate_id: str,
                    run_id: int | None, reason: str, actor: str) -> ChampionChoice:
    """Make ``candidate_id`` the champion of ``series_key`` from now on.

    Raises :class:`NotFoundError` if the series, candidate or run is unknown, and
    :class:`ConflictError` if the reason is blank or the run did not backtest the candidate
    on a version of the series.
    """
    if not reason.strip():
        raise ConflictError("choosing a champion needs a reason, and the reason given is blank")
    lock_audit_log(session)
    series_id = _series_id(session, series_key)
    if session.get(CandidateRecord, candidate_id) is None:
        raise NotFoundError(f"candidate {candidate_id} does not exist")
    if run_id is not None:
        _check_run_backtested(session, run_id, series_id, series_key, candidate_id)
    record = ChampionChoiceRecord(series_id=series_id, candidate_id=candidate_id, run_id=run_id,
                                  reason=reason, chosen_by=actor, chosen_at=utc_now())
    session.add(record)
    session.flush()
    record_event(session, actor=actor, action="champion.chosen",
                 subject=champion_subject(record.id), digest=champion_digest([as_row(record)]))
    chosen = _choices().where(ChampionChoiceRecord.id == record.id)
    return _choice(*session.execute(chosen).one())


@translates_errors
def current_champion(session: Session, series_key: str,
                     as_of: datetime | None = None) -> ChampionChoice | None:
    """The latest choice for a series (made by ``as_of``, if given), or ``None`` if none was
    made (or the key is unknown)."""
    query = _choices(as_of).where(SeriesRecord.key == series_key)
    row = session.execute(query.order_by(ChampionChoiceRecord.id.desc()).limit(1)).first()
    return None if row is None else _choice(*row)


@translates_errors
def champion_history(session: Session, series_key: str,
                     as_of: datetime | None = None) -> list[ChampionChoice]:
    """Every choice for a series (made by ``as_of``, if given), oldest first."""
    query = _choices(as_of).where(SeriesRecord.key == series_key)
    return [_choice(*row) for row in session.execute(query.order_by(ChampionChoiceRecord.id))]


@translates_errors
def current_champions(session: Session,
                      as_of: datetime | None = None) -> dict[str, ChampionChoice]:
    """The latest choice (made by ``as_of``, if given) of every series that has one, by
    series key."""
    made = _made_by(as_of)
    latest = (select(func.max(ChampionChoiceRecord.id)).where(*made)
              .group_by(ChampionChoiceRecord.series_id).scalar_subquery())
    rows = session.execute(_choices(as_of).where(ChampionChoiceRecord.id.in_(latest))
                           .order_by(SeriesRecord.key))
    return {row[1]: _choice(*row) for row in rows}


def _series_id(session: Session, series_key: str) -> int:
    series_id = session.scalar(select(SeriesRecord.id).where(SeriesRecord.key == series_key))
    if series_id is None:
        raise NotFoundError(f"series {series_key!r} does not exist")
    return series_id


def _check_run_backtested(session: Session, run_id: int, series_id: int, series_key: str,
                          candidate_id: str) -> None:
    if session.get(Run, run_id) is None:
        raise NotFoundError(f"run {run_id} does not exist")
    versions = select(SeriesVersion.id).where(SeriesVersion.series_id == series_id)
    in_run = exists().where(RunSeries.run_id == run_id,
                            RunSeries.series_version_id.in_(versions))
    requested = exists().where(RunCandidate.run_id == run_id,
                               RunCandidate.candidate_id == candidate_id)
    # the engine adds the plan's benchmark to every series even when it was not requested
    added = exists().where(ResultCandidate.run_id == run_id,
                           ResultCandidate.candidate_id == candidate_id,
                           ResultCandidate.series_version_id.in_(versions))
    if not session.scalar(select(in_run & (requested | added))):
        raise ConflictError(f"run {run_id} did not backtest candidate {candidate_id} on series "
                            f"{series_key!r}, so it cannot justify choosing it")


def _choices(as_of: datetime | None = None
             ) -> Select[tuple[ChampionChoiceRecord, str, int, dict[str, Any]]]:
    return (select(ChampionChoiceRecord, SeriesRecord.key, SeriesRecord.season_length,
                   CandidateRecord.spec)
            .join(SeriesRecord, SeriesRecord.id == ChampionChoiceRecord.series_id)
            .join(CandidateRecord, CandidateRecord.id == ChampionChoiceRecord.candidate_id)
            .where(*_made_by(as_of)))


def _made_by(as_of: datetime | None) -> list[ColumnElement[bool]]:
    return [] if as_of is None else [ChampionChoiceRecord.chosen_at <= as_of]


def _choice(record: ChampionChoiceRecord, series_key: str, season_length: int,
            spec: dict[str, Any]) -> ChampionChoice:
    return ChampionChoice(record.id, series_key, record.candidate_id,
                          parse_candidate(spec).label(season_length), record.run_id,
                          record.reason, record.chosen_by, record.chosen_at)
