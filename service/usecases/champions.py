"""Choosing a series' champion, reading champions and their history (as they stood at a
point in time), and the champions a run suggests.

A choice names the succeeded run that justified it, which must have backtested the
candidate on the series. A run suggests, per series, its best-ranked candidate among those
in the model confidence set (the best-ranked overall when no set could be computed); a
person confirms a suggestion by choosing it.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from typing import Any

from sqlalchemy.orm import Session, sessionmaker

from service.errors import FieldError, InvalidInputError
from service.usecases.transactions import write
from storage.errors import NotFoundError
from storage.ledger import (
    ChampionChoice,
    champion_history,
    choose_champion,
    current_champion,
    current_champions,
)
from storage.results import rank_table
from storage.runs import get_run, run_versions
from storage.series import get_series

__all__ = ["ChampionChoice", "Suggestion", "all_champions", "champion_choices", "champion_of",
           "choose", "suggestions"]


@dataclass(frozen=True)
class Suggestion:
    """A run's suggested champion for one series."""

    run_id: int
    series_key: str
    series_version: int
    candidate_id: str
    candidate: str
    rank: int
    score: float | None
    in_confidence_set: bool | None
    basis: str
    current_champion: str | None


def choose(sessions: sessionmaker[Session], *, series_key: str, candidate_id: str, run_id: int,
           reason: str, actor: str) -> ChampionChoice:
    """Record ``candidate_id`` as the series' champion, justified by run ``run_id``."""
    def record(session: Session) -> ChampionChoice:
        get_series(session, series_key)
        _check_justified(session, series_key, run_id)
        return choose_champion(session, series_key=series_key, candidate_id=candidate_id,
                               run_id=run_id, reason=reason, actor=actor)

    return write(sessions, record)


def champion_of(sessions: sessionmaker[Session], series_key: str,
                as_of: datetime | None = None) -> ChampionChoice | None:
    """The series' champion now, or the one in force at ``as_of`` (``None`` if none was
    chosen by then)."""
    with sessions.begin() as session:
        get_series(session, series_key)
        return current_champion(session, series_key, as_of)


def champion_choices(sessions: sessionmaker[Session], series_key: str,
                     as_of: datetime | None = None) -> list[ChampionChoice]:
    """Every champion choice of the series (made by ``as_of``), oldest first."""
    with sessions.begin() as session:
        get_series(session, series_key)
        return champion_history(session, series_key, as_of)


def all_champions(sessions: sessionmaker[Session],
                  as_of: datetime | None = None) -> dict[str, ChampionChoice]:
    """Every series' champion (in force at ``as_of``), by series key."""
    with sessions.begin() as session:
        return current_champions(session, as_of)


def suggestions(sessions: sessionmaker[Session], run_id: int) -> list[Suggestion]:
    """Per series of a run, in its order: the candidate the run suggests as champion."""
    with sessions.begin() as session:
        return _suggestions(session, run_id)


def _suggestions(session: Session, run_id: int) -> list[Suggestion]:
    get_run(session, run_id)
    champions = current_champions(session)
    by_series: dict[str, list[dict[str, Any]]] = {}
    for row in rank_table(session, run_id):
        if row["rank"] is not None:
            by_series.setdefault(row["series_key"], []).append(row)
    found = []
    for key, rows in by_series.items():
        in_set = [r for r in rows if r["in_confidence_set"]]
        best = min(in_set or rows, key=lambda r: (r["rank"], r["candidate_id"]))
        champion = champions.get(key)
        found.append(Suggestion(
            run_id, key, best["series_version"], best["candidate_id"], best["candidate"],
            best["rank"], best["score"], best["in_confidence_set"],
            "confidence_set" if in_set else "rank",
            champion.candidate_id if champion else None))
    return found


def _check_justified(session: Session, series_key: str, run_id: int) -> None:
    # storage checks that the run backtested the candidate on the series (409 if not)
    try:
        run = get_run(session, run_id)
    except NotFoundError as exc:
        raise _invalid("/run_id", str(exc)) from None
    if run.status != "succeeded":
        raise _invalid("/run_id", f"run {run_id} is {run.status}; a champion is justified "
                       "by a succeeded run")
    if all(v.series_key != series_key for v in run_versions(session, run_id)):
        raise _invalid("/run_id", f"run {run_id} did not backtest series {series_key!r}")


def _invalid(pointer: str, message: str) -> InvalidInputError:
    return InvalidInputError(message, errors=[FieldError("body", pointer, message)])
