"""Running independent tasks in a process pool or on a dask cluster, one BLAS thread per task.

statsmodels' state-space code is not thread-safe, so tasks run in processes: joblib's loky
pool on this machine, or the workers of a dask.distributed scheduler (joblib's ``dask``
backend) when a scheduler address is given; cluster workers are started with
``dask worker ADDRESS --nthreads 1`` and have this project installed. BLAS is limited to
one thread inside every task (threadpoolctl): with more, the workers' threads compete for
the cores and a run gets much slower. A task is a whole unit of work (the engine's is one
series with one candidate, or a chunk of its origins when tasks are fewer than workers),
so each worker process imports the code once and receives already-validated inputs.
Results are yielded as tasks finish, while the pool goes on with the rest; the caller may
work on them (score, store) meanwhile. The local pool runs at most
:data:`AHEAD_PER_WORKER` tasks per worker ahead of the caller: when the caller is the
slower side (a job worker storing every series' results), finished results would otherwise
pile up in its memory (a quarter of a 1,000-series run's, about 0.7 GiB, measured).

Pool processes never outlive the process that started them: each one, as it starts, runs
a watchdog thread that ends it within :data:`WATCH_SECONDS` of being handed to another
parent; so a worker killed with SIGKILL, or a server stopped by SIGTERM, leaves no pool
behind. (Linux's parent-death signal, ``prctl(PR_SET_PDEATHSIG)``, is not used: it fires
when the parent *thread* that started the process ends, and loky starts replacement
processes from whichever thread submits work.)
"""

from __future__ import annotations

import os
import queue
import threading
import time
from collections.abc import Callable, Generator, Iterable, Iterator, Sequence
from concurrent.futures import FIRST_COMPLETED, Future, wait
from typing import Any, TypeVar

from joblib import Parallel, delayed, parallel_config
from joblib.externals.loky import get_reusable_executor
from threadpoolctl import threadpool_limits

T = TypeVar("T")
WATCH_SECONDS = 0.5
#: Tasks per worker submitted to the local pool and not yet taken by the caller, at most.
AHEAD_PER_WORKER = 8


def die_with_parent() -> None:
    """End this process once its parent has died (it is then re-parented)."""
    parent = os.getppid()

    def watch() -> None:
        while os.getppid() == parent:
            time.sleep(WATCH_SECONDS)
        os._exit(1)

    threading.Thread(target=watch, name="parent-watchdog", daemon=True).start()


def _single_threaded(fn: Callable[..., T], index: int, args: tuple[Any, ...]) -> tuple[int, T]:
    with threadpool_limits(limits=1):
        return index, fn(*args)


def iter_tasks(fn: Callable[..., T], tasks: Sequence[tuple[Any, ...]], *, n_jobs: int = 1,
               scheduler: str | None = None) -> Generator[tuple[int, T], None, None]:
    """Call ``fn(*task)`` for every task; yield ``(index, result)`` as each one finishes.

    Parameters
    ----------
    fn : a module-level function (it is pickled by reference).
    tasks : argument tuples, one per call.
    n_jobs : local worker processes; 1 runs in this process. Ignored with ``scheduler``.
    scheduler : address of a dask.distributed scheduler, e.g. ``"tcp://10.0.0.5:8786"``;
        the tasks then run on its workers.

    Closing the generator early cancels the tasks not yet started; in the local pool it
    also ends the tasks running (their processes are killed and replaced when next needed).
    """
    if scheduler is not None:
        return _on_cluster(scheduler, (delayed(_single_threaded)(fn, i, t)
                                       for i, t in enumerate(tasks)))
    if n_jobs == 1:
        return (_single_threaded(fn, i, t) for i, t in enumerate(tasks))
    return _in_local_pool(fn, tasks, n_jobs)


def _in_local_pool(fn: Callable[..., T], tasks: Sequence[tuple[Any, ...]], n_jobs: int
                   ) -> Generator[tuple[int, T], None, None]:
    """The local pool (loky's reusable executor), :data:`AHEAD_PER_WORKER` tasks per worker
    ahead of the caller at most. A task's error is raised here; then, or when the caller
    closes the generator early, the workers are killed and the tasks not finished dropped."""
    executor = get_reusable_executor(max_workers=n_jobs, initializer=die_with_parent)
    queued: Iterator[tuple[int, tuple[Any, ...]]] = enumerate(tasks)
    pending: set[Future[tuple[int, T]]] = set()

    def submit_next() -> None:
        item = next(queued, None)
        if item is not None:
            pending.add(executor.submit(_single_threaded, fn, *item))

    for _ in range(AHEAD_PER_WORKER * n_jobs):
        submit_next()
    try:
        while pending:
            done, _ = wait(pending, return_when=FIRST_COMPLETED)
            for future in done:
                pending.remove(future)
                submit_next()
                yield future.result()
    finally:
        if pending:  # the executor fails the pending tasks' futures itself
            _drop_queued_ids(executor)
            executor.shutdown(kill_workers=True)


def _drop_queued_ids(executor: Any) -> None:
    """Empty the queue of task ids the executor has not yet handed to a worker. loky 3.6
    (joblib 1.6), shut down with ``kill_workers``, fails the pending futures but leaves
    their ids queued, and its manager thread then dies on them with a ``KeyError``."""
    while True:
        try:
            executor._work_ids.get_nowait()
        except queue.Empty:
            return


def _on_cluster(scheduler: str, calls: Iterable[Any]) -> Generator[tuple[int, Any], None, None]:
    # Imported here: dask is needed only when a cluster is used.
    from dask.distributed import Client

    # dask.distributed's Client has no annotations
    client = Client(scheduler, set_as_default=False)  # type: ignore[no-untyped-call]
    with client, parallel_config(backend="dask", client=client):
        yield from Parallel(return_as="generator_unordered")(calls)
