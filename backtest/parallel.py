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
work on them (score, store) meanwhile.

Pool processes never outlive the process that started them: each one, as it starts, runs
a watchdog thread that ends it within :data:`WATCH_SECONDS` of being handed to another
parent; so a worker killed with SIGKILL, or a server stopped by SIGTERM, leaves no pool
behind. (Linux's parent-death signal, ``prctl(PR_SET_PDEATHSIG)``, is not used: it fires
when the parent *thread* that started the process ends, and loky starts replacement
processes from whichever thread submits work.)
"""

from __future__ import annotations

import os
import threading
import time
from collections.abc import Callable, Generator, Iterable, Sequence
from typing import Any, TypeVar, cast

from joblib import Parallel, delayed, parallel_config
from threadpoolctl import threadpool_limits

T = TypeVar("T")
WATCH_SECONDS = 0.5


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
    calls = (delayed(_single_threaded)(fn, i, t) for i, t in enumerate(tasks))
    if scheduler is not None:
        return _on_cluster(scheduler, calls)
    if n_jobs == 1:
        return (_single_threaded(fn, i, t) for i, t in enumerate(tasks))
    # joblib's unordered generator (a Python generator; joblib has no annotations)
    return cast(Generator[tuple[int, T], None, None], Parallel(
        n_jobs=n_jobs, backend="loky", return_as="generator_unordered",
        initializer=die_with_parent)(calls))


def _on_cluster(scheduler: str, calls: Iterable[Any]) -> Generator[tuple[int, Any], None, None]:
    # Imported here: dask is needed only when a cluster is used.
    from dask.distributed import Client

    # dask.distributed's Client has no annotations
    client = Client(scheduler, set_as_default=False)  # type: ignore[no-untyped-call]
    with client, parallel_config(backend="dask", client=client):
        yield from Parallel(return_as="generator_unordered")(calls)
