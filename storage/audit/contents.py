"""What each audit event vouches for: subject names and content digests.

Every digest is computed twice by the same code: by the writer from the rows it inserts,
and by :func:`stored_digest` from the rows now in the database, so an audit can tell
whether stored content still matches what was written. Progress counters and lease columns
of a running run are operational state and not audited; a run's request is digested when
queued and its whole row when it reaches a final status (after which it is frozen).
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping
from typing import Any

from sqlalchemy import Table, select
from sqlalchemy.orm import Session

from storage.audit.digest import Row, combine, table_digest
from storage.db import (
    ApiKey,
    ApiKeyRevocation,
    Base,
    CandidateRecord,
    ChampionChoiceRecord,
    FoldRecord,
    FoldWarning,
    ForecastBound,
    ForecastRecord,
    IssuedBound,
    IssuedForecastRecord,
    IssuedPoint,
    Observation,
    OutcomeLevel,
    OutcomeRecord,
    OutcomeSetRecord,
    PlanRecord,
    RankRecord,
    ResultCandidate,
    Run,
    RunCandidate,
    RunSeries,
    ScoreRecord,
    SeriesRecord,
    SeriesResultRecord,
    SeriesVersion,
)

RUN_REQUEST_COLUMNS = ("id", "plan_id", "seed", "requested_by", "idempotency_key", "queued_at")
UNIT_TABLES: tuple[Table, ...] = tuple(
    model.__table__ for model in (SeriesResultRecord, ResultCandidate, FoldRecord,
                                  ForecastRecord, ForecastBound, FoldWarning, ScoreRecord,
                                  RankRecord))
ISSUED_TABLES: tuple[Table, ...] = tuple(
    model.__table__ for model in (IssuedForecastRecord, IssuedPoint, IssuedBound))
OUTCOME_TABLES: tuple[Table, ...] = tuple(
    model.__table__ for model in (OutcomeSetRecord, OutcomeRecord, OutcomeLevel))


def as_row(record: Base) -> dict[str, Any]:
    """A mapped record's column values by column name."""
    return {column.key: getattr(record, column.key) for column in record.__table__.columns}


def series_subject(series_id: int) -> str:
    """Subject name of a series."""
    return f"series/{series_id}"


def version_subject(version_id: int) -> str:
    """Subject name of a series version."""
    return f"series_version/{version_id}"


def candidate_subject(candidate_id: str) -> str:
    """Subject name of a candidate."""
    return f"candidate/{candidate_id}"


def plan_subject(plan_id: str) -> str:
    """Subject name of a plan."""
    return f"plan/{plan_id}"


def run_subject(run_id: int) -> str:
    """Subject name of a run."""
    return f"run/{run_id}"


def unit_subject(run_id: int, series_version_id: int) -> str:
    """Subject name of one series' results in one run."""
    return f"series_result/{run_id}/{series_version_id}"


def champion_subject(choice_id: int) -> str:
    """Subject name of a champion choice."""
    return f"champion_choice/{choice_id}"


def issued_subject(forecast_id: int) -> str:
    """Subject name of an issued forecast."""
    return f"issued_forecast/{forecast_id}"


def outcomes_subject(forecast_id: int, series_version_id: int) -> str:
    """Subject name of an issued forecast's outcomes against one series version."""
    return f"outcome_set/{forecast_id}/{series_version_id}"


def series_digest(series: Iterable[Row]) -> str:
    """Digest of a series row."""
    return table_digest(SeriesRecord.__table__, series)


def version_digest(versions: Iterable[Row], observations: Iterable[Row]) -> str:
    """Digest of a version row and its observations."""
    return combine([table_digest(SeriesVersion.__table__, versions),
                    table_digest(Observation.__table__, observations)])


def candidate_digest(candidates: Iterable[Row]) -> str:
    """Digest of a candidate row."""
    return table_digest(CandidateRecord.__table__, candidates)


def plan_digest(plans: Iterable[Row]) -> str:
    """Digest of a plan row."""
    return table_digest(PlanRecord.__table__, plans)


def run_request_digest(runs: Iterable[Row], series: Iterable[Row],
                       candidates: Iterable[Row]) -> str:
    """Digest of what a run asked for: its request columns, series and candidates."""
    return combine([table_digest(Run.__table__, runs, RUN_REQUEST_COLUMNS),
                    table_digest(RunSeries.__table__, series),
                    table_digest(RunCandidate.__table__, candidates)])


def run_final_digest(runs: Iterable[Row]) -> str:
    """Digest of a finished run's whole row."""
    return table_digest(Run.__table__, runs)


def unit_digest(rows: Mapping[Table, Iterable[Row]]) -> str:
    """Digest of every row of one series' results, by table."""
    return combine(table_digest(table, rows[table]) for table in UNIT_TABLES)


def champion_digest(choices: Iterable[Row]) -> str:
    """Digest of a champion choice row."""
    return table_digest(ChampionChoiceRecord.__table__, choices)


def issued_digest(rows: Mapping[Table, Iterable[Row]]) -> str:
    """Digest of an issued forecast's header, points and bounds."""
    return combine(table_digest(table, rows[table]) for table in ISSUED_TABLES)


def outcomes_digest(rows: Mapping[Table, Iterable[Row]]) -> str:
    """Digest of one outcome set: its header, outcomes and per-level rows."""
    return combine(table_digest(table, rows[table]) for table in OUTCOME_TABLES)


def key_subject(key_id: str) -> str:
    """Subject name of an API key (its creation, role and revocation)."""
    return f"api_key/{key_id}"


def key_digest(rows: Iterable[Row]) -> str:
    """Digest of an API key's row: id, name, role, secret hash, creation."""
    return table_digest(ApiKey.__table__, rows)


def revocation_digest(rows: Iterable[Row]) -> str:
    """Digest of an API key's revocation row."""
    return table_digest(ApiKeyRevocation.__table__, rows)


def stored_digest(session: Session, action: str, subject: str) -> str | None:
    """The digest of a subject's content as stored now; ``None`` if ``action`` has none."""
    reader = _READERS.get(action)
    if reader is None:
        return None
    return reader(session, subject.split("/")[1:])


def _rows(session: Session, table: Table, **keys: Any) -> list[Row]:
    condition = [table.c[name] == value for name, value in keys.items()]
    return list(session.execute(select(table).where(*condition)).mappings())


def _series(session: Session, ids: list[str]) -> str:
    return series_digest(_rows(session, SeriesRecord.__table__, id=int(ids[0])))


def _version(session: Session, ids: list[str]) -> str:
    version_id = int(ids[0])
    return version_digest(
        _rows(session, SeriesVersion.__table__, id=version_id),
        _rows(session, Observation.__table__, series_version_id=version_id))


def _candidate(session: Session, ids: list[str]) -> str:
    return candidate_digest(_rows(session, CandidateRecord.__table__, id=ids[0]))


def _plan(session: Session, ids: list[str]) -> str:
    return plan_digest(_rows(session, PlanRecord.__table__, id=ids[0]))


def _run_request(session: Session, ids: list[str]) -> str:
    run_id = int(ids[0])
    return run_request_digest(_rows(session, Run.__table__, id=run_id),
                              _rows(session, RunSeries.__table__, run_id=run_id),
                              _rows(session, RunCandidate.__table__, run_id=run_id))


def _run_final(session: Session, ids: list[str]) -> str:
    return run_final_digest(_rows(session, Run.__table__, id=int(ids[0])))


def _unit(session: Session, ids: list[str]) -> str:
    keys = {"run_id": int(ids[0]), "series_version_id": int(ids[1])}
    return unit_digest({table: _rows(session, table, **keys) for table in UNIT_TABLES})


def _champion(session: Session, ids: list[str]) -> str:
    return champion_digest(_rows(session, ChampionChoiceRecord.__table__, id=int(ids[0])))


def _issued(session: Session, ids: list[str]) -> str:
    forecast_id = int(ids[0])
    header, points, bounds = ISSUED_TABLES
    return issued_digest({header: _rows(session, header, id=forecast_id),
                          points: _rows(session, points, forecast_id=forecast_id),
                          bounds: _rows(session, bounds, forecast_id=forecast_id)})


def _outcomes(session: Session, ids: list[str]) -> str:
    keys = {"forecast_id": int(ids[0]), "series_version_id": int(ids[1])}
    return outcomes_digest({table: _rows(session, table, **keys) for table in OUTCOME_TABLES})


def _key(session: Session, ids: list[str]) -> str:
    return key_digest(_rows(session, ApiKey.__table__, id=ids[0]))


def _revocation(session: Session, ids: list[str]) -> str:
    return revocation_digest(_rows(session, ApiKeyRevocation.__table__, key_id=ids[0]))


_READERS: dict[str, Callable[[Session, list[str]], str]] = {
    "api_key.created": _key,
    "api_key.revoked": _revocation,
    "series.created": _series,
    "series_version.created": _version,
    "candidate.registered": _candidate,
    "plan.registered": _plan,
    "run.queued": _run_request,
    "run.finished": _run_final,
    "results.written": _unit,
    "champion.chosen": _champion,
    "forecast.issued": _issued,
    "outcomes.recorded": _outcomes,
}
