"""The ranking's common ground survives storage: own-folds figure and common origins; the
stored scores' common-ground figures and the BI view over them across migration 0009_h14."""

from __future__ import annotations

import uuid
from dataclasses import replace
from pathlib import Path

import pytest
from alembic import command
from sqlalchemy import text
from sqlalchemy.orm import Session

from backtest.engine import run_backtest
from backtest.ranking import on_common_ground, rank_candidates
from backtest.scoring import score_candidate
from storage.audit import verify_audit_log
from storage.db import grant_bi_reader, make_engine, session_factory
from storage.db.migrate import alembic_config, upgrade
from storage.results import load_series_result, rank_table, write_series_result
from storage.runs import finish_run, queue_run, start_run
from storage.series import save_series_version
from tests.storage.builders import ACTOR, benchmark_candidates, monthly_series, small_plan
from tests.storage.conftest import BACKENDS, migrated_store


def _with_failed_fold(result, plan: dict, candidate_id: str, fold: int):
    """The series result as if ``candidate_id`` had failed at ``fold``: folds, scores and
    ranking recomputed by the engine's own functions."""
    folds = tuple(replace(f, status="failed", reason="injected", point=None, lower={},
                          upper={}, params=None, scale=None, scale_sq=None)
                  if (f.candidate_id, f.fold) == (candidate_id, fold) else f
                  for f in result.folds)
    def rescore(cid, subset):
        return score_candidate(cid, subset, plan["horizon"], plan["levels"])

    scores = on_common_ground(result.candidates, [
        s for c in result.candidates for s in rescore(
            c.candidate_id, [f for f in folds if f.candidate_id == c.candidate_id])],
        folds, plan["horizon"], rescore)
    ranking = rank_candidates(result.candidates, scores, folds, result.benchmark_id,
                              plan["rank_by"], plan["rank_horizon"], plan["horizon"])
    return replace(result, folds=folds, scores=scores, ranking=ranking)


def test_rank_rows_keep_common_origins_and_own_fold_scores(session: Session):
    series = monthly_series("sales/east", seed=3)
    plan = small_plan()
    candidates = benchmark_candidates()
    version = save_series_version(session, series, actor=ACTOR).version.id
    run = queue_run(session, series_version_ids=[version], candidates=candidates, plan=plan,
                    actor=ACTOR)
    start_run(session, run.id, actor="worker-1")
    result = run_backtest([series], list(candidates), plan)
    fragile = candidates[0].id
    sr = _with_failed_fold(result.series[0], result.plan, fragile, 0)
    write_series_result(session, run.id, version, sr, actor="worker-1")
    finish_run(session, run.id, actor="worker-1", software=result.software,
               timing=result.timing)

    rows = {r["candidate_id"]: r for r in rank_table(session, run.id)}
    assert {r["common_folds"] for r in rows.values()} == {2}
    other = next(cid for cid in rows if cid != fragile)
    own = {s.candidate_id: s.value for s in sr.scores
           if s.metric == "mase" and s.horizon is None and s.level is None}
    assert rows[other]["score_own_folds"] == own[other]
    assert rows[other]["score"] != rows[other]["score_own_folds"]  # 2 of its 3 origins
    assert rows[fragile]["score"] == rows[fragile]["score_own_folds"] == own[fragile]
    assert rows[other]["score_count"] == rows[other]["score_possible"] == 2 * 4
    assert load_series_result(session, run.id, version).ranking == sr.ranking


def _store_with_a_failed_fold(url: str) -> tuple[str, str]:
    """A succeeded run on sales/east whose first candidate failed at fold 0; returns that
    candidate's id and another's."""
    engine = make_engine(url)
    with session_factory(engine).begin() as session:
        series = monthly_series("sales/east", seed=3)
        plan = small_plan()
        candidates = benchmark_candidates()
        version = save_series_version(session, series, actor=ACTOR).version.id
        run = queue_run(session, series_version_ids=[version], candidates=candidates,
                        plan=plan, actor=ACTOR)
        start_run(session, run.id, actor="worker-1")
        result = run_backtest([series], list(candidates), plan)
        fragile = candidates[0].id
        sr = _with_failed_fold(result.series[0], result.plan, fragile, 0)
        write_series_result(session, run.id, version, sr, actor="worker-1")
        finish_run(session, run.id, actor="worker-1", software=result.software,
                   timing=result.timing)
    engine.dispose()
    return fragile, candidates[1].id


def _view(url: str) -> dict[str, dict]:
    engine = make_engine(url)
    with engine.connect() as connection:
        rows = connection.execute(text(
            "SELECT * FROM bi_latest_ranking WHERE metric = 'mase' AND horizon IS NULL "
            "AND level IS NULL")).mappings().all()
    engine.dispose()
    return {row["candidate_id"]: dict(row) for row in rows}


@pytest.mark.parametrize("backend", BACKENDS)
def test_the_view_ranks_on_common_ground_and_older_rows_on_their_own_folds(backend: str,
                                                                           tmp_path: Path):
    """At head the view ranks on the common origins; at 0009_h19b (before) it ranked each
    candidate's own folds; rows without common-ground figures (as after a downgrade, or
    written before 0009_h14) read back their own-folds figures with common_folds null. On
    PostgreSQL a BI role's grant on the view survives the upgrade (the view is replaced in
    place)."""
    with migrated_store(backend, tmp_path) as url:
        fragile, other = _store_with_a_failed_fold(url)
        _assert_audit_verifies(url)
        head = _view(url)
        assert head[other]["common_folds"] == 2
        assert head[other]["value"] != pytest.approx(head[other]["value_own_folds"])
        assert head[fragile]["value"] == head[fragile]["value_own_folds"]
        own = {cid: row["value_own_folds"] for cid, row in head.items()}

        _downgrade(url, "0009_h19b")
        before = _view(url)
        assert "common_folds" not in before[other]
        assert {cid: row["value"] for cid, row in before.items()} == own
        role = f"bi_test_{uuid.uuid4().hex[:10]}"
        if backend == "postgresql":
            _grant(url, role)
        try:
            upgrade(url)
            older = _view(url)
            assert {cid: row["value"] for cid, row in older.items()} == own
            assert {row["common_folds"] for row in older.values()} == {None}
            if backend == "postgresql":
                assert _can_read_view(url, role)
        finally:
            if backend == "postgresql":
                _drop_role(url, role)


def _assert_audit_verifies(url: str) -> None:
    engine = make_engine(url)
    with session_factory(engine).begin() as session:
        report = verify_audit_log(session)
    engine.dispose()
    assert report.ok, report.problem


def _downgrade(url: str, revision: str) -> None:
    engine = make_engine(url)
    config = alembic_config()
    with engine.begin() as connection:
        config.attributes["connection"] = connection
        command.downgrade(config, revision)
    engine.dispose()


def _grant(url: str, role: str) -> None:
    engine = make_engine(url)
    with session_factory(engine).begin() as session:
        grant_bi_reader(session, role)
    engine.dispose()


def _can_read_view(url: str, role: str) -> bool:
    engine = make_engine(url)
    with engine.connect() as connection:
        allowed = connection.scalar(text(
            "SELECT has_table_privilege(:role, 'bi_latest_ranking', 'SELECT')"), {"role": role})
    engine.dispose()
    return bool(allowed)


def _drop_role(url: str, role: str) -> None:
    engine = make_engine(url)
    with engine.begin() as connection:
        connection.execute(text(f'DROP OWNED BY "{role}"'))
        connection.execute(text(f'DROP ROLE "{role}"'))
    engine.dispose()
