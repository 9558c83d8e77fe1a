"""Running independent tasks in a joblib process pool with one BLAS thread per worker.

statsmodels' state-space code is not thread-safe, so tasks run in loky processes. BLAS is
limited to one thread inside every task (threadpoolctl): with more, the workers'
threads compete for the cores and a run gets much slower. Results come back in task order
whatever order they finish in.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any, TypeVar

from joblib import Parallel, delayed
from threadpoolctl import threadpool_limits

T = TypeVar("T")


def _single_threaded(fn: Callable[..., T], index: int, args: tuple) -> tuple[int, T]:
    with threadpool_limits(limits=1):
        return index, fn(*args)


def run_tasks(fn: Callable[..., T], tasks: Sequence[tuple[Any, ...]], *, n_jobs: int = 1,
              on_done: Callable[[int, T], None] | None = None) -> list[T]:
    """Call ``fn(*task)`` for every task; ``on_done(index, result)`` as each one finishes."""
    results: list[Any] = [None] * len(tasks)
    if n_jobs == 1:
        finished = (_single_threaded(fn, i, t) for i, t in enumerate(tasks))
    else:
        pool = Parallel(n_jobs=n_jobs, backend="loky", return_as="generator_unordered")
        finished = pool(delayed(_single_threaded)(fn, i, t) for i, t in enumerate(tasks))
    for index, result in finished:
        results[index] = result
        if on_done is not None:
            on_done(index, result)
    return results
