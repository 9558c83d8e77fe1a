"""The rolling-origin backtest: every candidate on every series, scored and ranked."""

from __future__ import annotations

import time
from collections.abc import Callable, Sequence

from backtest.candidates import Candidate
from backtest.errors import CandidateError
from backtest.folds import Origin, plan_origins
from backtest.models.benchmarks import BenchmarkSpec
from backtest.parallel import run_tasks
from backtest.plan import Plan
from backtest.ranking import rank_candidates
from backtest.results import BacktestResult, CandidateInfo, FoldResult, SeriesResult
from backtest.runner import run_candidate
from backtest.scoring import score_candidate
from backtest.series import Series
from backtest.software import software_versions

Progress = Callable[[int, int], None]


def run_backtest(series: Sequence[Series], candidates: Sequence[Candidate], plan: Plan, *,
                 n_jobs: int = 1, progress: Progress | None = None) -> BacktestResult:
    """Backtest ``candidates`` on ``series`` under ``plan``.

    The plan's benchmark is added to the candidates if it is not among them. Input errors
    (a candidate impossible for a series, a series too short for the plan) are raised
    before any computation; a candidate failing at one origin becomes a failed fold.
    ``progress(done, total)`` is called with fold counts as each (series, candidate) task
    finishes. Results do not depend on ``n_jobs`` or on the order tasks finish in.
    """
    started = time.perf_counter()
    pool, benchmark = _with_benchmark(candidates, plan)
    schedules = [_schedule(s, pool, plan) for s in series]
    tasks = [(s, c, plan, origins) for s, origins in zip(series, schedules) for c in pool]
    total = sum(len(t[3]) for t in tasks)
    done = 0

    def on_done(index: int, folds: tuple[FoldResult, ...]) -> None:
        nonlocal done
        done += len(folds)
        if progress is not None:
            progress(done, total)

    if progress is not None:
        progress(0, total)
    fold_sets = run_tasks(run_candidate, tasks, n_jobs=n_jobs, on_done=on_done)
    results = tuple(
        _series_result(s, pool, benchmark, plan, fold_sets[i * len(pool):(i + 1) * len(pool)],
                       added=benchmark not in candidates)
        for i, s in enumerate(series))
    elapsed = time.perf_counter() - started
    return BacktestResult(plan.canonical(), software_versions(), results,
                          {"seconds": elapsed, "folds": float(total)})


def _with_benchmark(candidates: Sequence[Candidate], plan: Plan) -> tuple[list[Candidate],
                                                                          Candidate]:
    benchmark = Candidate(BenchmarkSpec(plan.benchmark))  # type: ignore[arg-type]
    pool = list(candidates)
    if all(c.id != benchmark.id for c in pool):
        pool.append(benchmark)
    return pool, next(c for c in pool if c.id == benchmark.id)


def _schedule(series: Series, pool: Sequence[Candidate], plan: Plan) -> tuple[Origin, ...]:
    m = series.season_length
    for c in pool:
        c.spec.check(m)
        if c.spec.needs_positive and (series.values <= 0).any():
            first = int((series.values <= 0).argmax())
            raise CandidateError(
                f"{c.label(m)} needs strictly positive data, but series {series.key!r} has "
                f"{series.values[first]:g} at period {series.label(first)}")
    return plan_origins(series, plan, max(c.spec.min_train(m) for c in pool))


def _series_result(series: Series, pool: Sequence[Candidate], benchmark: Candidate, plan: Plan,
                   fold_sets: Sequence[tuple[FoldResult, ...]], added: bool) -> SeriesResult:
    m = series.season_length
    infos = tuple(CandidateInfo(c.id, c.label(m), c.canonical,
                                added and c.id == benchmark.id) for c in pool)
    folds = tuple(f for fs in fold_sets for f in fs)
    scores = tuple(s for c, fs in zip(pool, fold_sets)
                   for s in score_candidate(c.id, fs, plan.horizon, plan.levels))
    ranking = rank_candidates(infos, scores, folds, benchmark.id, plan.rank_by,
                              plan.rank_horizon)
    return SeriesResult(series.summary(), infos, benchmark.id, folds, scores, ranking)
