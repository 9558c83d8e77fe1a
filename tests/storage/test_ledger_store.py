"""The ledger of issued forecasts: stored once, read back exactly, append-only, audited."""

from __future__ import annotations

import dataclasses
import math
import threading
from concurrent.futures import ThreadPoolExecutor
from datetime import timedelta

import pytest
from sqlalchemy import func, select, text
from sqlalchemy.exc import DBAPIError
from sqlalchemy.orm import Session

from backtest.candidates import parse_candidate
from backtest.ledger import IssuedForecast, issue_forecast
from storage.audit import verify_audit_log
from storage.db import (
    AuditEvent,
    CandidateRecord,
    IssuedBound,
    IssuedForecastRecord,
    make_engine,
    session_factory,
    take_write_lock,
)
from storage.db.bulk import FAST_MIN_ROWS
from storage.errors import (
    IMMUTABLE_MARKER,
    ConflictError,
    ImmutableRecordError,
    NotFoundError,
)
from storage.ledger import IssuedRecord, get_issued, list_issued, record_issued_forecast
from storage.ledger.rows import bound_rows
from storage.series import save_series_version
from tests.storage.builders import ACTOR, drop_guards, issue_and_record, monthly_series

THETA = parse_candidate({"family": "theta", "season": "always"})


def _bits(forecast: IssuedForecast) -> list[str]:
    """Every float of a forecast as its exact hexadecimal form."""
    floats = [*forecast.point, forecast.scale, forecast.scale_sq, *forecast.params.values()]
    for level in forecast.levels:
        floats += [*forecast.lower[level], *forecast.upper[level]]
    return [float.hex(value) for value in floats]


def _count(session: Session, model: type) -> int:
    return session.scalar(select(func.count()).select_from(model))


def _issue(session: Session, key: str = "sales/north", **options: object):
    series = monthly_series(key, seed=3)
    version = save_series_version(session, series, actor=ACTOR).version
    forecast = issue_forecast(series, THETA, **{"horizon": 6, **options})
    return version, forecast


def test_an_issued_forecast_reads_back_exactly(session: Session):
    version, forecast = _issue(session)

    record, created = record_issued_forecast(session, series_version_id=version.id,
                                             forecast=forecast, actor=ACTOR)
    session.expire_all()
    stored = get_issued(session, record.forecast_id)

    assert created and stored == record
    assert stored.forecast == forecast and _bits(stored.forecast) == _bits(forecast)
    assert forecast.params and forecast.warnings == () and len(forecast.levels) == 2
    assert (stored.series_key, stored.series_version_id, stored.issued_by) == (
        "sales/north", version.id, ACTOR)
    assert _count(session, IssuedBound) == 6 * 2


def test_nan_and_infinite_values_come_back_as_they_were_issued(session: Session):
    version, forecast = _issue(session)
    inf = math.inf
    odd = dataclasses.replace(
        forecast, point=(math.nan, *forecast.point[1:]),
        lower={**forecast.lower, 95: (-inf, *forecast.lower[95][1:])},
        params={"alpha": math.nan, "beta": inf, "gamma": -inf, "tiny": 5e-324},
        warnings=("ConvergenceWarning: did not converge",))

    record, _ = record_issued_forecast(session, series_version_id=version.id, forecast=odd,
                                       actor=ACTOR)
    stored = get_issued(session, record.forecast_id).forecast

    assert math.isnan(stored.point[0]) and stored.point[1:] == odd.point[1:]
    assert stored.lower[95][0] == -inf and stored.lower == odd.lower
    assert math.isnan(stored.params["alpha"])
    assert (stored.params["beta"], stored.params["gamma"]) == (inf, -inf)
    assert stored.params["tiny"] == 5e-324 and stored.warnings == odd.warnings


def test_a_long_horizon_is_stored_in_bulk_and_reads_back_exactly(session: Session):
    version, forecast = _issue(session, horizon=400)
    long = dataclasses.replace(forecast, upper={**forecast.upper,
                                                95: (*forecast.upper[95][:-1], math.inf)})
    assert len(bound_rows(0, long)) >= FAST_MIN_ROWS

    record, _ = record_issued_forecast(session, series_version_id=version.id, forecast=long,
                                       actor=ACTOR)

    stored = get_issued(session, record.forecast_id).forecast
    assert stored == long and _bits(stored) == _bits(long)
    assert verify_audit_log(session).ok


def test_issuing_the_same_inputs_again_returns_the_stored_record(session: Session):
    version, forecast = _issue(session)
    first, _ = record_issued_forecast(session, series_version_id=version.id,
                                      forecast=forecast, actor=ACTOR)
    events = _count(session, AuditEvent)
    recomputed = dataclasses.replace(forecast, software={"python": "other"})

    again, created = record_issued_forecast(session, series_version_id=version.id,
                                            forecast=recomputed, actor="someone-else")

    assert not created and again == first
    assert again.forecast.software == forecast.software
    assert _count(session, AuditEvent) == events
    assert _count(session, IssuedForecastRecord) == 1


@pytest.mark.parametrize("change", [{"seed": 7}, {"horizon": 3}, {"levels": (50, 80, 95)}])
def test_other_inputs_issue_a_new_record(session: Session, change: dict):
    version, forecast = _issue(session)
    first, _ = record_issued_forecast(session, series_version_id=version.id,
                                      forecast=forecast, actor=ACTOR)
    _, other = _issue(session, **change)

    second, created = record_issued_forecast(session, series_version_id=version.id,
                                             forecast=other, actor=ACTOR)

    assert created and second.forecast_id > first.forecast_id
    assert second.forecast == other


def test_a_forecast_of_other_data_is_refused_and_nothing_is_written(session: Session):
    version, _ = _issue(session)
    _, other = _issue(session, key="sales/south")
    events = _count(session, AuditEvent)

    with pytest.raises(ConflictError, match=f"other data than series version {version.id}"):
        record_issued_forecast(session, series_version_id=version.id, forecast=other,
                               actor=ACTOR)

    assert _count(session, IssuedForecastRecord) == 0
    assert _count(session, AuditEvent) == events


def test_a_forecast_whose_parts_disagree_is_refused(session: Session):
    version, forecast = _issue(session)
    short = dataclasses.replace(forecast, upper={95: forecast.upper[95]})

    with pytest.raises(ConflictError, match="exactly its levels"):
        record_issued_forecast(session, series_version_id=version.id, forecast=short,
                               actor=ACTOR)


def test_unknown_version_and_forecast_are_not_found(session: Session):
    _, forecast = _issue(session)

    with pytest.raises(NotFoundError, match="series version 999999"):
        record_issued_forecast(session, series_version_id=999999, forecast=forecast,
                               actor=ACTOR)
    with pytest.raises(NotFoundError, match="issued forecast 999999"):
        get_issued(session, 999999)


def test_issuing_registers_a_new_candidate_in_the_catalog(session: Session):
    version, forecast = _issue(session)
    assert session.get(CandidateRecord, THETA.id) is None

    record_issued_forecast(session, series_version_id=version.id, forecast=forecast,
                           actor=ACTOR)

    assert session.get_one(CandidateRecord, THETA.id).spec == THETA.canonical
    assert verify_audit_log(session).ok


def test_listing_filters_by_series_candidate_time_and_pages_by_id(session: Session):
    north = issue_and_record(session, monthly_series("sales/north", seed=1))
    south = issue_and_record(session, monthly_series("sales/south", seed=2))
    naive = issue_and_record(session, monthly_series("sales/north", seed=1), method="naive")
    every = [north, south, naive]

    assert list_issued(session) == every
    assert list_issued(session, series_key="sales/north") == [north, naive]
    assert list_issued(session, candidate_id=naive.forecast.candidate_id) == [naive]
    assert list_issued(session, series_key="sales/west") == []
    assert list_issued(session, after_id=north.forecast_id, limit=1) == [south]
    assert list_issued(session, issued_from=south.issued_at) == [south, naive]
    assert list_issued(session, issued_to=south.issued_at) == [north]
    later = naive.issued_at + timedelta(seconds=1)
    assert list_issued(session, issued_from=later) == []


TABLES = ["issued_forecast", "issued_point", "issued_bound"]


@pytest.mark.parametrize("table", TABLES)
@pytest.mark.parametrize("statement", ["UPDATE {table} SET forecast_id = forecast_id",
                                       "DELETE FROM {table}"])
def test_database_refuses_changing_issued_forecasts(session: Session, table: str,
                                                    statement: str):
    issue_and_record(session, monthly_series("sales/north"))
    statement = statement.replace("forecast_id", "id") if table == TABLES[0] else statement

    with pytest.raises(DBAPIError, match=IMMUTABLE_MARKER), session.begin_nested():
        session.execute(text(statement.format(table=table)))


def test_session_refuses_orm_changes_to_an_issued_forecast(session: Session):
    record = issue_and_record(session, monthly_series("sales/north"))

    session.get_one(IssuedForecastRecord, record.forecast_id).issued_by = "mallory"
    with pytest.raises(ImmutableRecordError, match="issued_forecast"):
        session.flush()
    session.expire_all()

    session.delete(session.get_one(IssuedForecastRecord, record.forecast_id))
    with pytest.raises(ImmutableRecordError, match="cannot be deleted"):
        session.flush()


TAMPERING = [
    ("issued_point", "UPDATE issued_point SET point = point + 1 WHERE horizon = 2"),
    ("issued_bound", "DELETE FROM issued_bound WHERE level = 95"),
    ("issued_forecast", "UPDATE issued_forecast SET issued_by = 'mallory'"),
]


@pytest.mark.parametrize(("table", "statement"), TAMPERING, ids=[t[0] for t in TAMPERING])
def test_altering_an_issued_forecast_behind_the_api_is_caught(session: Session, table: str,
                                                              statement: str):
    record = issue_and_record(session, monthly_series("sales/north"))
    issue_and_record(session, monthly_series("sales/south"))
    assert verify_audit_log(session).ok
    drop_guards(session, table)

    changed = session.execute(text(f"{statement} AND forecast_id = :id" if table != TABLES[0]
                                   else f"{statement} WHERE id = :id"),
                              {"id": record.forecast_id})
    report = verify_audit_log(session)

    subject = f"issued_forecast/{record.forecast_id}"
    event = session.scalars(select(AuditEvent.seq).where(AuditEvent.subject == subject)).one()
    assert changed.rowcount > 0
    assert report.broken_at == event and subject in report.problem


def test_concurrent_issuers_of_the_same_inputs_store_one_record(fresh_url: str):
    engine = make_engine(fresh_url)
    sessions = session_factory(engine)
    series = monthly_series("sales/north", seed=3)
    with sessions.begin() as session:
        version_id = save_series_version(session, series, actor=ACTOR).version.id
    forecast = issue_forecast(series, THETA, horizon=6)
    issuers = 3
    ready = threading.Barrier(issuers)

    def issue(issuer: int) -> tuple[IssuedRecord, bool]:
        ready.wait(timeout=30)
        with sessions.begin() as session:
            take_write_lock(session)  # as every write transaction of the service does
            return record_issued_forecast(session, series_version_id=version_id,
                                          forecast=forecast, actor=f"issuer-{issuer}")

    try:
        with ThreadPoolExecutor(issuers) as pool:
            results = list(pool.map(issue, range(issuers)))
        with sessions() as session:
            stored = list_issued(session)
            report = verify_audit_log(session)
    finally:
        engine.dispose()

    assert sorted(created for _, created in results) == [False] * (issuers - 1) + [True]
    assert [record for record, _ in results] == stored * issuers
    assert report.ok
