"""The rolling-origin backtest: every candidate on every series, scored and ranked."""

from __future__ import annotations

import time
from collections import Counter
from collections.abc import Callable, Generator, Sequence
from contextlib import closing
from dataclasses import replace

from backtest.candidates import Candidate
from backtest.diagnosis import CandidateOutcome
from backtest.errors import CandidateError
from backtest.evidence import series_evidence
from backtest.folds import Origin, plan_origins
from backtest.models.benchmarks import BenchmarkSpec
from backtest.parallel import iter_tasks
from backtest.plan import Plan
from backtest.predictive import predictive_of
from backtest.ranking import on_common_ground, rank_candidates
from backtest.results import (
    BacktestResult,
    CandidateInfo,
    FoldResult,
    Score,
    SeriesResult,
    to_jsonable,
)
from backtest.scoring import score_candidate
from backtest.series import Series
from backtest.software import software_versions
from backtest.task_chunks import ChunkFolds, Task, Unit, join_chunks, plan_units, run_unit

Progress = Callable[[int, int], None]
Units = Generator[tuple[int, SeriesResult], None, None]


def run_backtest(series: Sequence[Series], candidates: Sequence[Candidate], plan: Plan, *,
                 n_jobs: int = 1, progress: Progress | None = None,
                 scheduler: str | None = None) -> BacktestResult:
    """Backtest ``candidates`` on ``series`` under ``plan``.

    The plan's benchmark is added to the candidates if it is not among them. Input errors
    (a candidate impossible for a series, a series too short for the plan) are raised
    before any computation; a candidate failing at one origin becomes a failed fold.
    ``progress(done, total)`` is called with fold counts as each (series, candidate) task
    finishes, or each chunk of one: with fewer estimating tasks than ``n_jobs``, tasks are
    cut into chunks of origins (:mod:`backtest.task_chunks`). ``scheduler``, the address
    of a dask.distributed scheduler, runs the tasks on its workers instead of ``n_jobs``
    local processes. Results do not depend on ``n_jobs``, on where tasks run or on the
    order they finish in.
    """
    started = time.perf_counter()
    results = dict(stream_backtest(series, candidates, plan, n_jobs=n_jobs, progress=progress,
                                   scheduler=scheduler))
    elapsed = time.perf_counter() - started
    total = sum(len(r.folds) for r in results.values())
    return BacktestResult(plan.canonical(), software_versions(),
                          tuple(results[i] for i in range(len(series))),
                          {"seconds": elapsed, "folds": float(total)})


def stream_backtest(series: Sequence[Series], candidates: Sequence[Candidate], plan: Plan, *,
                    n_jobs: int = 1, progress: Progress | None = None,
                    scheduler: str | None = None) -> Units:
    """:func:`run_backtest` one series at a time: yield ``(position in series, result)`` as
    soon as a series' last task is in, while the pool goes on with the other series' tasks.

    Input errors are raised here, before any computation. Each series is yielded once, in
    the order its tasks finish; its result equals the one :func:`run_backtest` returns.
    Closing the iterator early cancels the tasks not yet started.
    """
    pools = [_with_benchmark(candidates, plan, s.season_length) for s in series]
    schedules = [_schedule(s, pool, plan) for s, (pool, _) in zip(series, pools)]
    tasks = [(s, c, plan, origins)
             for s, origins, (pool, _) in zip(series, schedules, pools) for c in pool]
    return _series_results(series, pools, candidates, plan, tasks, n_jobs=n_jobs,
                           progress=progress, scheduler=scheduler)


def planned_fold_count(series: Sequence[Series], candidates: Sequence[Candidate],
                       plan: Plan) -> int:
    """The folds a backtest computes (its benchmark included); raises on bad input."""
    return sum(len(origins) * len(pool)
               for pool, origins in planned_origins(series, candidates, plan))


def planned_origins(series: Sequence[Series], candidates: Sequence[Candidate], plan: Plan
                    ) -> list[tuple[list[Candidate], tuple[Origin, ...]]]:
    """Per series, the candidates a backtest runs on it (its benchmark included) and its
    origins; raises on bad input, computes nothing."""
    plans = []
    for s in series:
        pool, _ = _with_benchmark(candidates, plan, s.season_length)
        plans.append((pool, _schedule(s, pool, plan)))
    return plans


def _series_results(series: Sequence[Series], pools: Sequence[tuple[list[Candidate], Candidate]],
                    requested: Sequence[Candidate], plan: Plan, tasks: Sequence[Task], *,
                    n_jobs: int, progress: Progress | None, scheduler: str | None) -> Units:
    total = sum(len(t[3]) for t in tasks)
    done = 0
    first = [0]
    for pool, _ in pools:
        first.append(first[-1] + len(pool))
    owner = [i for i, (pool, _) in enumerate(pools) for _ in pool]
    units = (plan_units(tasks, n_jobs) if scheduler is None and n_jobs > 1
             else [Unit(i, t[3], True, True) for i, t in enumerate(tasks)])
    chunk_counts = Counter(u.task for u in units)
    chunks: dict[int, dict[int, ChunkFolds]] = {}
    outcomes: dict[int, CandidateOutcome] = {}
    if progress is not None:
        progress(0, total)
    calls = [(*tasks[u.task][:3], u.origins, u.whole, u.diagnose) for u in units]
    # Closed explicitly, so that leaving early (the caller closes this stream, or progress
    # raises) stops the pool's tasks at once rather than when the garbage is collected.
    with closing(iter_tasks(run_unit, calls, n_jobs=n_jobs, scheduler=scheduler)) as finished:
        for position, outcome in finished:
            index = units[position].task
            if isinstance(outcome, ChunkFolds):
                done += outcome.fold_count
                chunks.setdefault(index, {})[position] = outcome
                if len(chunks[index]) < chunk_counts[index]:
                    if progress is not None:
                        progress(done, total)
                    continue
                parts = chunks.pop(index)
                outcome = join_chunks(tasks[index][1], plan, [parts[k] for k in sorted(parts)])
            else:
                done += len(outcome.folds)
            if progress is not None:
                progress(done, total)
            outcomes[index] = outcome
            i = owner[index]
            span = range(first[i], first[i + 1])
            if all(j in outcomes for j in span):
                pool, benchmark = pools[i]
                yield i, _series_result(series[i], pool, benchmark, plan,
                                        [outcomes.pop(j) for j in span],
                                        added=benchmark not in requested)


def _with_benchmark(candidates: Sequence[Candidate], plan: Plan, season_length: int
                    ) -> tuple[list[Candidate], Candidate]:
    """The candidates of one series and its benchmark: the plan's benchmark, or a candidate
    that forecasts the same with the model's own intervals (with m = 1 seasonal naive is
    naive), added if none does."""
    method = _benchmark_method(plan.benchmark, season_length)
    pool = list(candidates)
    same = [c for c in pool if isinstance(c.spec, BenchmarkSpec) and c.intervals is None
            and _benchmark_method(c.spec.method, season_length) == method]
    exact = [c for c in same
             if isinstance(c.spec, BenchmarkSpec) and c.spec.method == plan.benchmark]
    if exact or same:
        return pool, (exact or same)[0]
    benchmark = Candidate(BenchmarkSpec(plan.benchmark))
    return [*pool, benchmark], benchmark


def _benchmark_method(method: str, season_length: int) -> str:
    """A benchmark method by the forecasts it makes: seasonal naive with m = 1 is naive."""
    return "naive" if method == "seasonal_naive" and season_length == 1 else method


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
                   outcomes: Sequence[CandidateOutcome], added: bool) -> SeriesResult:
    m = series.season_length
    infos = tuple(CandidateInfo(c.id, c.label(m), c.canonical,
                                added and c.id == benchmark.id) for c in pool)
    folds = tuple(f for o in outcomes for f in o.folds)
    predictive = {c.id: predictive_of(c, plan.step) for c in pool}
    def rescore(cid: str, subset: list[FoldResult]) -> list[Score]:
        return score_candidate(cid, subset, plan.horizon, plan.levels, series.filled,
                               predictive[cid])

    scores = on_common_ground(infos, [s for c, o in zip(pool, outcomes)
                                      for s in rescore(c.id, list(o.folds))],
                              folds, plan.horizon, rescore)
    evidence, notes = series_evidence({c.id: o.folds for c, o in zip(pool, outcomes)},
                                      benchmark.id, plan, predictive, series.filled)
    evidence = replace(evidence,
                       diagnostics={c.id: o.diagnostics for c, o in zip(pool, outcomes)},
                       stability={c.id: o.stability for c, o in zip(pool, outcomes)})
    ranking = tuple(
        replace(row, in_confidence_set=notes[row.candidate_id].in_confidence_set,
                beats_benchmark=None if row.is_benchmark
                else notes[row.candidate_id].beats_benchmark,
                calibration_zone=notes[row.candidate_id].calibration_zone)
        for row in rank_candidates(
            infos, scores, folds, benchmark.id, plan.rank_by, plan.rank_horizon, plan.horizon,
            rescore))
    return SeriesResult(series.summary(), infos, benchmark.id, folds, scores, ranking,
                        to_jsonable(evidence.to_dict()))
