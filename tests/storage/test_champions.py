"""Champions: each choice appended with its reason and run; the latest one is current."""

from __future__ import annotations

import pytest
from sqlalchemy import func, select, text
from sqlalchemy.exc import DBAPIError
from sqlalchemy.orm import Session

from backtest.candidates import parse_candidate
from storage.audit import verify_audit_log
from storage.db import AuditEvent, ChampionChoiceRecord
from storage.errors import IMMUTABLE_MARKER, ConflictError, NotFoundError
from storage.ledger import (
    champion_history,
    choose_champion,
    current_champion,
    current_champions,
)
from storage.specs import register_candidate
from tests.storage.builders import (
    ACTOR,
    benchmark_candidates,
    drop_guards,
    monthly_series,
    run_and_store,
)

NAIVE, DRIFT = (c.id for c in benchmark_candidates())
SEASONAL_NAIVE = parse_candidate({"family": "benchmark", "method": "seasonal_naive"}).id


def _two_series_run(session: Session) -> int:
    run_id, _, _ = run_and_store(session, [monthly_series("sales/north", seed=1),
                                           monthly_series("sales/south", seed=2)])
    return run_id


def test_the_latest_choice_is_current_and_all_are_kept(session: Session):
    run_id = _two_series_run(session)

    first = choose_champion(session, series_key="sales/north", candidate_id=NAIVE,
                            run_id=run_id, reason="lowest MASE", actor=ACTOR)
    second = choose_champion(session, series_key="sales/north", candidate_id=DRIFT,
                             run_id=None, reason="the trend is real", actor="lead@example.org")
    south = choose_champion(session, series_key="sales/south", candidate_id=DRIFT,
                            run_id=run_id, reason="best at h=1", actor=ACTOR)

    assert current_champion(session, "sales/north") == second
    assert champion_history(session, "sales/north") == [first, second]
    assert current_champions(session) == {"sales/north": second, "sales/south": south}
    assert (first.series_key, first.candidate_id, first.run_id, first.reason,
            first.chosen_by) == ("sales/north", NAIVE, run_id, "lowest MASE", ACTOR)
    assert second.run_id is None and first.chosen_at <= second.chosen_at
    assert verify_audit_log(session).ok


def test_a_series_without_a_choice_has_no_champion(session: Session):
    _two_series_run(session)

    assert current_champion(session, "sales/north") is None
    assert champion_history(session, "sales/north") == []
    assert current_champions(session) == {}


def test_the_benchmark_the_engine_added_can_be_chosen_on_its_run(session: Session):
    run_id = _two_series_run(session)

    choice = choose_champion(session, series_key="sales/south", candidate_id=SEASONAL_NAIVE,
                             run_id=run_id, reason="nothing beats it", actor=ACTOR)

    assert current_champion(session, "sales/south") == choice


@pytest.mark.parametrize(("change", "message"), [
    ({"series_key": "sales/west"}, "series 'sales/west' does not exist"),
    ({"candidate_id": "c0000000000000000"}, "candidate c0000000000000000 does not exist"),
    ({"run_id": 999999}, "run 999999 does not exist"),
])
def test_unknown_series_candidate_or_run_is_not_found(session: Session, change: dict,
                                                      message: str):
    run_id = _two_series_run(session)
    choice = {"series_key": "sales/north", "candidate_id": NAIVE, "run_id": run_id,
              "reason": "lowest MASE", "actor": ACTOR, **change}

    with pytest.raises(NotFoundError, match=message):
        choose_champion(session, **choice)


def test_a_run_that_did_not_backtest_the_choice_cannot_justify_it(session: Session):
    run_id = _two_series_run(session)
    other_run, _, _ = run_and_store(session, [monthly_series("sales/east", seed=3)])
    theta = parse_candidate({"family": "theta"})
    register_candidate(session, theta.id, theta.canonical, actor=ACTOR)

    with pytest.raises(ConflictError, match=f"run {run_id} did not backtest candidate"):
        choose_champion(session, series_key="sales/north", candidate_id=theta.id,
                        run_id=run_id, reason="looks good", actor=ACTOR)
    with pytest.raises(ConflictError, match=f"run {other_run} did not backtest"):
        choose_champion(session, series_key="sales/north", candidate_id=NAIVE,
                        run_id=other_run, reason="looks good", actor=ACTOR)

    assert session.scalar(select(func.count()).select_from(ChampionChoiceRecord)) == 0


@pytest.mark.parametrize("reason", ["", "   \n"])
def test_a_blank_reason_is_refused(session: Session, reason: str):
    run_id = _two_series_run(session)

    with pytest.raises(ConflictError, match="reason given is blank"):
        choose_champion(session, series_key="sales/north", candidate_id=NAIVE, run_id=run_id,
                        reason=reason, actor=ACTOR)


@pytest.mark.parametrize("statement", ["UPDATE champion_choice SET reason = 'x'",
                                       "DELETE FROM champion_choice"])
def test_database_refuses_changing_a_choice(session: Session, statement: str):
    choose_champion(session, series_key="sales/north", candidate_id=NAIVE,
                    run_id=_two_series_run(session), reason="lowest MASE", actor=ACTOR)

    with pytest.raises(DBAPIError, match=IMMUTABLE_MARKER), session.begin_nested():
        session.execute(text(statement))


def test_rewriting_a_reason_behind_the_api_is_caught(session: Session):
    choice = choose_champion(session, series_key="sales/north", candidate_id=NAIVE,
                             run_id=_two_series_run(session), reason="lowest MASE",
                             actor=ACTOR)
    drop_guards(session, "champion_choice")

    session.execute(text("UPDATE champion_choice SET reason = 'a hunch' WHERE id = :id"),
                    {"id": choice.choice_id})
    report = verify_audit_log(session)

    subject = f"champion_choice/{choice.choice_id}"
    event = session.scalars(select(AuditEvent.seq).where(AuditEvent.subject == subject)).one()
    assert report.broken_at == event and subject in report.problem


def test_a_choice_added_behind_the_log_is_caught(session: Session):
    _two_series_run(session)

    session.execute(text(
        "INSERT INTO champion_choice (series_id, candidate_id, reason, chosen_by, chosen_at) "
        f"SELECT id, '{NAIVE}', 'sneaky', 'mallory', '2030-01-01 00:00:00' FROM series "
        "WHERE key = 'sales/north'"))
    report = verify_audit_log(session)

    assert not report.ok and report.broken_at is None
    assert "champion_choice/" in report.problem
