"""The first-call cost of compiled code: a fresh process imports a module and calls its
``warm_up()``, once with an empty numba cache (compiling) and once with it filled
(loading). Shared by the fast-estimator benches."""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def print_first_call_cost(module: str) -> None:
    """Print import + warm-up and warm-up seconds of ``module.warm_up()`` in a fresh
    process, compiling and then loading the cache."""
    code = ("import time; t = time.perf_counter(); "
            f"from {module} import warm_up; s = warm_up(); "
            "print(f'{time.perf_counter() - t:.2f} {s:.2f}')")
    with tempfile.TemporaryDirectory() as cache:
        env = {**os.environ, "NUMBA_CACHE_DIR": cache}
        for what in ("empty cache (compiles)", "filled cache (loads)"):
            out = subprocess.run([sys.executable, "-c", code], env=env, cwd=ROOT, check=True,
                                 capture_output=True, text=True).stdout.split()
            print(f"  {module}, first call, {what:24s}: import + warm-up "
                  f"{float(out[0]):6.2f} s, warm-up {float(out[1]):6.2f} s")
