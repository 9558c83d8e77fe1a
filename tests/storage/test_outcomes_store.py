"""Outcomes: due when later actuals arrive, recorded exactly once per version, never
overwritten, append-only and audited."""

from __future__ import annotations

import threading
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import pytest
from sqlalchemy import func, select, text
from sqlalchemy.exc import DBAPIError
from sqlalchemy.orm import Session

from backtest.ledger import Outcome, score_outcomes
from backtest.series import Series, make_series
from storage.audit import verify_audit_log
from storage.db import (
    AuditEvent,
    OutcomeLevel,
    OutcomeRecord,
    OutcomeSetRecord,
    make_engine,
    session_factory,
    take_write_lock,
)
from storage.errors import IMMUTABLE_MARKER, ConflictError, NotFoundError
from storage.ledger import (
    IssuedRecord,
    current_outcomes,
    due_outcomes,
    issued_with_outcomes,
    outcome_sets,
    record_outcomes,
)
from storage.series import save_series_version
from tests.storage.builders import ACTOR, drop_guards, issue_and_record, monthly_series

KEY = "sales/north"


def _corrected(series: Series, position: int, delta: float) -> Series:
    values = np.array(series.values, dtype=float)
    values[position] += delta
    return make_series(series.key, "P1M", zip(series.labels(), values))


def _save(session: Session, series: Series) -> int:
    return save_series_version(session, series, actor=ACTOR).version.id


def _score(session: Session, issued: IssuedRecord, series: Series,
           version_id: int) -> tuple[Outcome, ...]:
    outcomes = score_outcomes(issued.forecast, series)
    assert record_outcomes(session, forecast_id=issued.forecast_id,
                           series_version_id=version_id, outcomes=outcomes, actor="worker-1")
    return outcomes


def _bits(outcomes: tuple[Outcome, ...]) -> list[str]:
    floats = [v for o in outcomes for v in (o.actual, o.point, o.error, o.scaled_error,
                                            o.smape_term, *o.interval_scores.values())]
    return [float.hex(value) for value in floats]


def _count(session: Session, model: type) -> int:
    return session.scalar(select(func.count()).select_from(model))


def test_a_forecast_is_due_once_actuals_of_its_periods_arrive(session: Session):
    issued = issue_and_record(session, monthly_series(KEY, n=48))
    assert due_outcomes(session) == []
    later = monthly_series(KEY, n=50)

    version = save_series_version(session, later, actor=ACTOR).version

    assert version.change == "append"
    assert due_outcomes(session) == [(issued.forecast_id, version.id)]
    assert current_outcomes(session, issued.forecast_id) is None


def test_recorded_outcomes_read_back_exactly_and_are_no_longer_due(session: Session):
    issued = issue_and_record(session, monthly_series(KEY, n=48))
    later = monthly_series(KEY, n=50)
    version_id = _save(session, later)

    outcomes = _score(session, issued, later, version_id)
    session.expire_all()
    stored = current_outcomes(session, issued.forecast_id)

    assert [o.horizon for o in outcomes] == [1, 2]
    assert stored.outcomes == outcomes and _bits(stored.outcomes) == _bits(outcomes)
    assert (stored.forecast_id, stored.series_version_id) == (issued.forecast_id, version_id)
    assert due_outcomes(session) == []
    assert verify_audit_log(session).ok


def test_a_correction_is_scored_as_a_new_set_and_the_old_one_is_kept(session: Session):
    issued = issue_and_record(session, monthly_series(KEY, n=48))
    later = monthly_series(KEY, n=50)
    first = _score(session, issued, later, _save(session, later))
    corrected = _corrected(later, 48, 10.0)
    corrected_id = _save(session, corrected)

    assert due_outcomes(session) == [(issued.forecast_id, corrected_id)]
    second = _score(session, issued, corrected, corrected_id)

    sets = outcome_sets(session, issued.forecast_id)
    assert [s.outcomes for s in sets] == [first, second]
    assert second[0].actual == first[0].actual + 10.0 and second[1] == first[1]
    assert current_outcomes(session, issued.forecast_id) == sets[1]
    assert due_outcomes(session) == []


def test_a_correction_of_older_history_makes_nothing_due(session: Session):
    series = monthly_series(KEY, n=48)
    issue_and_record(session, series)

    version = save_series_version(session, _corrected(series, 10, 5.0), actor=ACTOR).version

    assert version.change == "revision"
    assert due_outcomes(session) == []


def test_scoring_a_scored_pair_again_writes_nothing(session: Session):
    issued = issue_and_record(session, monthly_series(KEY, n=48))
    later = monthly_series(KEY, n=51)
    version_id = _save(session, later)
    outcomes = _score(session, issued, later, version_id)
    counts = [_count(session, m) for m in (AuditEvent, OutcomeSetRecord, OutcomeRecord,
                                           OutcomeLevel)]

    again = record_outcomes(session, forecast_id=issued.forecast_id,
                            series_version_id=version_id, outcomes=outcomes[:1],
                            actor="worker-2")

    assert again is False
    assert [_count(session, m) for m in (AuditEvent, OutcomeSetRecord, OutcomeRecord,
                                         OutcomeLevel)] == counts == [counts[0], 1, 3, 6]


def test_concurrent_workers_record_a_set_exactly_once(fresh_url: str):
    engine = make_engine(fresh_url)
    sessions = session_factory(engine)
    later = monthly_series(KEY, n=50)
    with sessions.begin() as session:
        issued = issue_and_record(session, monthly_series(KEY, n=48))
        version_id = _save(session, later)
    outcomes = score_outcomes(issued.forecast, later)
    workers = 4
    ready = threading.Barrier(workers)

    def score(worker: int) -> bool:
        ready.wait(timeout=30)
        with sessions.begin() as session:
            take_write_lock(session)  # as every write transaction of the service does
            return record_outcomes(session, forecast_id=issued.forecast_id,
                                   series_version_id=version_id, outcomes=outcomes,
                                   actor=f"worker-{worker}")

    try:
        with ThreadPoolExecutor(workers) as pool:
            results = list(pool.map(score, range(workers)))
        with sessions() as session:
            stored = outcome_sets(session, issued.forecast_id)
            report = verify_audit_log(session)
            events = _count(session, AuditEvent)
    finally:
        engine.dispose()

    assert sorted(results) == [False] * (workers - 1) + [True]
    assert [s.outcomes for s in stored] == [outcomes]
    assert report.ok and report.events_checked == events


def test_issued_forecasts_come_with_their_current_outcomes(session: Session):
    first = issue_and_record(session, monthly_series(KEY, n=48))
    later = monthly_series(KEY, n=49)
    version_id = _save(session, later)
    second = issue_and_record(session, later)
    issue_and_record(session, later, method="naive")
    outcomes = _score(session, first, later, version_id)

    history = issued_with_outcomes(session, KEY, first.forecast.candidate_id)

    assert [h.forecast_id for h in history] == [first.forecast_id, second.forecast_id]
    assert [h.outcomes for h in history] == [outcomes, ()]
    assert history[0].forecast == first.forecast and history[1].issued_at == second.issued_at
    assert issued_with_outcomes(session, "sales/west", first.forecast.candidate_id) == []


def test_outcomes_that_do_not_fit_the_forecast_are_refused(session: Session):
    issued = issue_and_record(session, monthly_series(KEY, n=48))
    other = issue_and_record(session, monthly_series("sales/south", n=48))
    later = monthly_series(KEY, n=50)
    version_id = _save(session, later)
    outcomes = score_outcomes(issued.forecast, later)
    shifted = (Outcome(**{**outcomes[0].__dict__, "horizon": 2}),)
    missing_level = (Outcome(**{**outcomes[0].__dict__, "hits": {80: True}}),)

    def record(forecast_id: int, version: int, given: tuple[Outcome, ...]) -> bool:
        return record_outcomes(session, forecast_id=forecast_id, series_version_id=version,
                               outcomes=given, actor="worker-1")

    with pytest.raises(ConflictError, match="not a later version"):
        record(other.forecast_id, version_id, outcomes)
    with pytest.raises(ConflictError, match="not a later version"):
        record(issued.forecast_id, issued.series_version_id, outcomes)
    with pytest.raises(ConflictError, match="no target period '2023-01' at horizon 2"):
        record(issued.forecast_id, version_id, shifted)
    with pytest.raises(ConflictError, match="exactly the forecast's levels"):
        record(issued.forecast_id, version_id, missing_level)
    with pytest.raises(NotFoundError, match="issued forecast 999999"):
        record(999999, version_id, outcomes)
    with pytest.raises(NotFoundError, match="series version 999999"):
        record(issued.forecast_id, 999999, outcomes)
    with pytest.raises(NotFoundError, match="issued forecast 999999"):
        outcome_sets(session, 999999)
    assert _count(session, OutcomeSetRecord) == 0


TABLES = ["outcome_set", "outcome", "outcome_level"]


def _scored_twice(session: Session) -> IssuedRecord:
    issued = issue_and_record(session, monthly_series(KEY, n=48))
    later = monthly_series(KEY, n=50)
    _score(session, issued, later, _save(session, later))
    corrected = _corrected(later, 49, -3.0)
    _score(session, issued, corrected, _save(session, corrected))
    return issued


@pytest.mark.parametrize("table", TABLES)
@pytest.mark.parametrize("statement", ["UPDATE {table} SET forecast_id = forecast_id",
                                       "DELETE FROM {table}"])
def test_database_refuses_changing_outcomes(session: Session, table: str, statement: str):
    _scored_twice(session)

    with pytest.raises(DBAPIError, match=IMMUTABLE_MARKER), session.begin_nested():
        session.execute(text(statement.format(table=table)))


TAMPERING = [
    ("outcome", "UPDATE outcome SET actual = actual + 1 WHERE horizon = 1"),
    ("outcome_level", "UPDATE outcome_level SET hit = NOT hit WHERE level = 80"),
    ("outcome_set", "UPDATE outcome_set SET scored_by = 'mallory' WHERE scored_by <> ''"),
]


@pytest.mark.parametrize(("table", "statement"), TAMPERING, ids=[t[0] for t in TAMPERING])
def test_altering_outcomes_behind_the_api_is_caught(session: Session, table: str,
                                                    statement: str):
    issued = _scored_twice(session)
    second = outcome_sets(session, issued.forecast_id)[1]
    assert verify_audit_log(session).ok
    drop_guards(session, table)

    changed = session.execute(text(f"{statement} AND series_version_id = :version"),
                              {"version": second.series_version_id})
    report = verify_audit_log(session)

    subject = f"outcome_set/{issued.forecast_id}/{second.series_version_id}"
    event = session.scalars(select(AuditEvent.seq).where(AuditEvent.subject == subject)).one()
    assert changed.rowcount > 0
    assert report.broken_at == event and subject in report.problem
