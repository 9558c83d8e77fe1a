"""The local process pool: results as tasks finish, bounded ahead of a slow caller."""

import os
import time
from pathlib import Path

import pytest

from backtest.parallel import AHEAD_PER_WORKER, iter_tasks

N_JOBS = 2


def _folders(tmp_path: Path, n: int) -> list[tuple[str]]:
    return [(str(tmp_path / f"task-{i}"),) for i in range(n)]


def test_every_task_runs_once_and_comes_back_with_its_index(tmp_path: Path):
    tasks = _folders(tmp_path, 50)
    seen = sorted(i for i, _ in iter_tasks(os.mkdir, tasks, n_jobs=N_JOBS))
    assert seen == list(range(50))
    assert len(list(tmp_path.iterdir())) == 50


def test_the_pool_runs_no_further_ahead_of_a_slow_caller_than_its_window(tmp_path: Path):
    results = iter_tasks(os.mkdir, _folders(tmp_path, 200), n_jobs=N_JOBS)
    next(results)
    time.sleep(1.5)  # ample time for 200 tiny tasks, were they all submitted
    started = len(list(tmp_path.iterdir()))
    assert 1 < started <= 1 + AHEAD_PER_WORKER * N_JOBS
    assert len(list(results)) == 199
    assert len(list(tmp_path.iterdir())) == 200


def test_a_task_error_reaches_the_caller_and_the_pool_serves_the_next_call(tmp_path: Path):
    tasks = _folders(tmp_path, 40)
    os.mkdir(tasks[5][0])
    with pytest.raises(FileExistsError):
        list(iter_tasks(os.mkdir, tasks, n_jobs=N_JOBS))
    fresh = _folders(tmp_path / "again", 4)
    os.mkdir(tmp_path / "again")
    assert sorted(i for i, _ in iter_tasks(os.mkdir, fresh, n_jobs=N_JOBS)) == [0, 1, 2, 3]


def test_closing_early_ends_the_running_tasks(tmp_path: Path):
    results = iter_tasks(time.sleep, [(0.0,)] + [(60.0,)] * 6, n_jobs=N_JOBS)
    next(results)
    time.sleep(0.5)  # both workers are now inside a 60-second task
    began = time.monotonic()
    results.close()
    fresh = _folders(tmp_path, 4)
    assert sorted(i for i, _ in iter_tasks(os.mkdir, fresh, n_jobs=N_JOBS)) == [0, 1, 2, 3]
    assert time.monotonic() - began < 20
