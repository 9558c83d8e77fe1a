"""Writing results one series at a time: all or nothing per unit, refused once stored."""

from __future__ import annotations

import dataclasses
import json
import math

import pytest
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from backtest.engine import run_backtest
from backtest.results import FoldResult, RankRow, Score, SeriesResult
from storage.audit import UNIT_TABLES
from storage.db import ForecastRecord, make_engine, session_factory
from storage.errors import ConflictError, ImmutableRecordError
from storage.results import (
    completed_units,
    load_candidate_folds,
    load_series_result,
    pending_units,
    write_series_result,
)
from storage.runs import finish_run, get_run, queue_run, start_run
from storage.series import save_series_version
from tests.storage.builders import (
    ACTOR,
    benchmark_candidates,
    monthly_series,
    run_and_store,
    small_plan,
)


def _running_run(session: Session, n_series: int = 2):
    series = [monthly_series(f"sales/{i}", seed=i) for i in range(n_series)]
    versions = [save_series_version(session, s, actor=ACTOR).version.id for s in series]
    candidates = benchmark_candidates()
    run = queue_run(session, series_version_ids=versions, candidates=candidates,
                    plan=small_plan(), actor=ACTOR)
    start_run(session, run.id, actor="worker-1")
    result = run_backtest(series, list(candidates), small_plan())
    return run.id, versions, result


def _unit_row_count(session: Session, run_id: int, version: int) -> int:
    return sum(session.scalar(select(func.count()).select_from(table).where(
        table.c.run_id == run_id, table.c.series_version_id == version)) for table in UNIT_TABLES)


def _with_edge_cases(result: SeriesResult) -> SeriesResult:
    """The engine's result plus what it rarely produces: failures, NaN, warnings, None."""
    ok = result.folds[0]
    failed = dataclasses.replace(ok, fold=ok.fold + 100, status="failed",
                                 reason="LinAlgError: singular matrix", params=None,
                                 point=None, lower={}, upper={}, scale=None,
                                 warnings=("ConvergenceWarning: no convergence",
                                           "RuntimeWarning: overflow"))
    odd = dataclasses.replace(ok, fold=ok.fold + 101, point=(math.nan, *ok.point[1:]),
                              params={"sigma": math.nan, "phi": 1.5e20},
                              lower={80: (-math.inf, *ok.lower[80][1:])},
                              upper={80: (math.inf, *ok.upper[80][1:])})
    unscored = Score(ok.candidate_id, None, "msis", 95, None, 0, "no fold completed")
    unranked = RankRow(None, ok.candidate_id, "Naive", None, None, False, 0, 3, False, None,
                       "red")
    evidence = {"calibration": {"80": {"hits": [1, 0, 1], "p": 0.25}}, "notes": ["ok", None]}
    return dataclasses.replace(result, folds=(*result.folds, failed, odd),
                               scores=(*result.scores, unscored),
                               ranking=(*result.ranking, unranked), evidence=evidence)


def _same_fold(loaded: FoldResult, written: FoldResult) -> bool:
    """Equality that counts NaN as equal to NaN (JSON text writes it as ``NaN``)."""
    def text(fold: FoldResult) -> str:
        return json.dumps(dataclasses.asdict(fold), sort_keys=True)
    return text(loaded) == text(written)


def test_rare_values_round_trip(session: Session):
    run_id, versions, result = _running_run(session, 1)
    written = _with_edge_cases(result.series[0])

    write_series_result(session, run_id, versions[0], written, actor="worker-1")
    loaded = load_series_result(session, run_id, versions[0])

    assert all(_same_fold(a, b) for a, b in zip(loaded.folds, written.folds, strict=True))
    assert dataclasses.replace(loaded, folds=()) == dataclasses.replace(written, folds=())
    assert loaded.folds[-1].params["phi"] == 1.5e20


def test_one_candidates_folds_read_alone_equal_those_of_the_whole_unit(session: Session):
    run_id, versions, result = _running_run(session, 1)
    written = _with_edge_cases(result.series[0])
    write_series_result(session, run_id, versions[0], written, actor="worker-1")
    whole = load_series_result(session, run_id, versions[0])

    for candidate in whole.candidates:
        alone = load_candidate_folds(session, run_id, versions[0], candidate.candidate_id)
        expected = [f for f in whole.folds if f.candidate_id == candidate.candidate_id]
        assert alone and all(_same_fold(a, b) for a, b in zip(alone, expected, strict=True))
    assert load_candidate_folds(session, run_id, versions[0], "c0000000000000000") == ()


def test_completed_and_pending_units_follow_the_writes(session: Session):
    run_id, versions, result = _running_run(session)
    assert pending_units(session, run_id) == versions

    write_series_result(session, run_id, versions[1], result.series[1], actor="worker-1")

    assert completed_units(session, run_id) == [versions[1]]
    assert pending_units(session, run_id) == [versions[0]]


def test_a_stored_unit_cannot_be_written_again(session: Session):
    run_id, versions, result = _running_run(session, 1)
    write_series_result(session, run_id, versions[0], result.series[0], actor="worker-1")

    with pytest.raises(ImmutableRecordError, match="already stored"):
        write_series_result(session, run_id, versions[0], result.series[0], actor="worker-1")


def test_results_of_a_finished_run_are_refused(session: Session):
    run_id, versions, result = run_and_store(session, [monthly_series("sales/north")])
    assert get_run(session, run_id).status == "succeeded"

    with pytest.raises(ImmutableRecordError, match="succeeded"):
        write_series_result(session, run_id, versions[0], result.series[0], actor="worker-1")
    with pytest.raises(ImmutableRecordError):
        finish_run(session, run_id, actor="worker-1", software={})


def test_results_must_match_the_run_and_its_data(session: Session):
    run_id, versions, result = _running_run(session)

    with pytest.raises(ConflictError, match="other data"):
        write_series_result(session, run_id, versions[0], result.series[1], actor="worker-1")
    other = save_series_version(session, monthly_series("other"), actor=ACTOR).version.id
    with pytest.raises(ConflictError, match="not part of run"):
        write_series_result(session, run_id, other, result.series[0], actor="worker-1")


def test_a_crash_inside_a_unit_leaves_nothing_of_it(fresh_url: str):
    engine = make_engine(fresh_url)
    sessions = session_factory(engine)
    with sessions.begin() as session:
        run_id, versions, result = _running_run(session)
        write_series_result(session, run_id, versions[0], result.series[0], actor="worker-1")
    bad_ranking = (*result.series[1].ranking,
                   dataclasses.replace(result.series[1].ranking[0], candidate_id="c" + "0" * 16))
    broken = dataclasses.replace(result.series[1], ranking=bad_ranking)

    with pytest.raises(ConflictError), sessions.begin() as session:
        write_series_result(session, run_id, versions[1], broken, actor="worker-1")
    with pytest.raises(RuntimeError, match="worker died"), sessions.begin() as session:
        write_series_result(session, run_id, versions[1], result.series[1], actor="worker-1")
        assert _unit_row_count(session, run_id, versions[1]) > 0
        raise RuntimeError("worker died")

    with sessions.begin() as session:
        assert _unit_row_count(session, run_id, versions[1]) == 0
        assert _unit_row_count(session, run_id, versions[0]) > 0
        assert pending_units(session, run_id) == [versions[1]]
        write_series_result(session, run_id, versions[1], result.series[1], actor="worker-1")
        finish_run(session, run_id, actor="worker-1", software=result.software)
    with sessions() as session:
        assert load_series_result(session, run_id, versions[1]) == result.series[1]
        assert session.scalar(select(func.count()).select_from(ForecastRecord)) == sum(
            len(f.periods) for s in result.series for f in s.folds)
    engine.dispose()


def test_digests_of_rows_written_before_the_convergence_columns_still_verify():
    """Migration 0006_h14a added ``fold_result.converged`` and
    ``rank_row.folds_not_converged``; a row holding the value older rows read back digests
    as it did without the column, and any other value changes the digest."""
    from storage.audit.digest import table_digest
    from storage.db import FoldRecord, RankRecord

    for table, column, old, new in ((FoldRecord.__table__, "converged", None, False),
                                    (RankRecord.__table__, "folds_not_converged", 0, 2)):
        row = {name: f"v{i}" for i, name in enumerate(table.columns.keys())}
        before = [c.name for c in table.columns if c.name != column]
        assert table_digest(table, [{**row, column: old}]) == table_digest(table, [row], before)
        assert table_digest(table, [{**row, column: new}]) != table_digest(table, [row], before)
