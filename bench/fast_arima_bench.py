"""The fast ARIMA estimator against the reference (statsmodels' own fit), side by side.

Parts (all by default; ``--part`` picks one):

- ``compile``: the first-call cost of the compiled likelihood, in a fresh process with an
  empty numba cache (compiling) and again with the cache filled (loading).
- ``fit``: one estimation of each model on log Series G (Box & Jenkins 1976, from
  ``tests/data``): the airline model ARIMA(0,1,1)×(0,1,1) and ARIMA(1,0,0)×(0,1,1), season 12,
  with drift (the engine bench's panel models), fast and reference interleaved, with the
  log-likelihood of each.
- ``search``: the order search of one fold (``arima_search`` defaults) on log Series G at
  a few training-window ends, seconds per fold under each estimator.
- ``engine``: ``run_backtest`` of the airline model on log Series G, re-estimating at
  every origin (``refit: 1``, ``assessment: "lean"``), under each estimator, one process.
- ``corpus``: the validation corpus (``tests/backtest/fast_arima_corpus.py``, at least
  500 re-estimated folds over at least 20 series): per fold the fast and the reference
  estimate, their log-likelihoods by statsmodels (the exact likelihood of the differenced
  series, and the reference model's own with its approximate-diffuse start), the largest
  parameter difference and the largest relative difference of 12-step point forecasts.

    python bench/fast_arima_bench.py [--part fit] [--repeats 5] [--origins 16]

Not a test: timings depend on the machine and its load (printed first).
"""

from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # before numpy loads its BLAS

import argparse  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from threadpoolctl import threadpool_limits  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from backtest.candidates import parse_candidates  # noqa: E402
from backtest.engine import run_backtest  # noqa: E402
from backtest.models.arima import ArimaSpec, vector  # noqa: E402
from backtest.models.arima_search import ArimaSearchSpec  # noqa: E402
from backtest.models.fast_arima import fast_estimate, warm_up  # noqa: E402
from backtest.plan import parse_plan  # noqa: E402
from backtest.series import make_series  # noqa: E402
from tests.backtest.fast_arima_corpus import corpus, exact_loglike, origins  # noqa: E402

SERIES_G = ROOT / "tests" / "data" / "series_g.csv"
MODELS = {"airline": ArimaSpec((0, 1, 1), (0, 1, 1), 12),
          "ARIMA(1,0,0)×(0,1,1), season 12, drift": ArimaSpec((1, 0, 0), (0, 1, 1), 12, "drift")}


def _series_g() -> np.ndarray:
    return pd.read_csv(SERIES_G).iloc[:, 1].to_numpy(float)


def _quiet(call):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return call()


def part_compile() -> None:
    code = ("import time; t = time.perf_counter(); "
            "from backtest.models.fast_arima import warm_up; s = warm_up(); "
            "print(f'{time.perf_counter() - t:.2f} {s:.2f}')")
    with tempfile.TemporaryDirectory() as cache:
        env = {**os.environ, "NUMBA_CACHE_DIR": cache}
        for what in ("empty cache (compiles)", "filled cache (loads)"):
            out = subprocess.run([sys.executable, "-c", code], env=env, cwd=ROOT, check=True,
                                 capture_output=True, text=True).stdout.split()
            print(f"  first call, {what:24s}: import + warm-up {float(out[0]):6.2f} s, "
                  f"warm-up {float(out[1]):6.2f} s")


def part_fit(repeats: int) -> None:
    y = np.log(_series_g())
    for name, spec in MODELS.items():
        fast_times, reference_times = [], []
        for _ in range(repeats):
            began = time.perf_counter()
            fast = fast_estimate(spec, y, 12)
            fast_times.append(time.perf_counter() - began)
            began = time.perf_counter()
            reference = _quiet(lambda spec=spec: spec.reference_fit(y, 12))
            reference_times.append(time.perf_counter() - began)
        fast_s, reference_s = np.median(fast_times), np.median(reference_times)
        gap = exact_loglike(spec, y, fast.params) - exact_loglike(spec, y, reference.params)
        print(f"  {name:32s} fast {fast_s * 1e3:7.1f} ms  reference {reference_s * 1e3:7.1f} ms"
              f"  ratio {reference_s / fast_s:5.1f}x  loglik fast {fast.llf:.7f} "
              f"(fast - reference {gap:+.2e})")


def part_search(folds: int) -> None:
    y = np.log(_series_g())
    spec = ArimaSearchSpec()
    ends = [int(e) for e in np.linspace(108, 144, folds)]
    for estimator in ("fast", "reference"):
        began = time.perf_counter()
        chosen = [spec.fit(y[:end], 12, estimator=estimator, keep_raw=False) for end in ends]
        per_fold = (time.perf_counter() - began) / len(ends)
        labels = [spec.chosen(f.params)[0].label(12) for f in chosen]
        print(f"  {estimator:9s} {per_fold:6.2f} s per fold  chosen: {', '.join(labels)}")
        if estimator == "fast":
            fast_per_fold = per_fold
    print(f"  ratio reference / fast: {per_fold / fast_per_fold:.1f}x")


def part_engine(max_origins: int) -> None:
    values = _series_g()
    series = make_series("g", "P1M", [(f"{1949 + i // 12}-{i % 12 + 1:02d}", v)
                                      for i, v in enumerate(values)])
    candidates = parse_candidates([{"family": "arima", "order": [0, 1, 1],
                                    "seasonal": {"order": [0, 1, 1]}, "transform": "log"}])
    seconds = {}
    for estimator in ("fast", "reference"):
        plan = parse_plan({"horizon": 12, "max_origins": max_origins, "refit": 1,
                           "assessment": "lean", "estimator": estimator})
        began = time.perf_counter()
        result = _quiet(lambda plan=plan: run_backtest([series], candidates, plan))
        seconds[estimator] = time.perf_counter() - began
        folds = result.series[0].folds
        print(f"  {estimator:9s} {seconds[estimator]:6.2f} s for {len(folds)} folds "
              f"(airline + benchmark), {max_origins} origins re-estimated")
    print(f"  ratio reference / fast: {seconds['reference'] / seconds['fast']:.1f}x")


def part_corpus(per_spec: int) -> None:
    rows = []
    for item in corpus("full"):
        for spec in item.specs:
            for end in origins(item, spec, per_spec):
                y, m = item.values[:end], item.season_length
                fast = fast_estimate(spec, y, m)
                reference = _quiet(lambda spec=spec, y=y, m=m: spec.reference_fit(y, m))
                model = spec.model(y, m)
                own = _quiet(lambda model=model, fast=fast, reference=reference: (
                    model.loglike(vector(model, fast.params))
                    - model.loglike(vector(model, reference.params))))
                names = [k for k in fast.params if k != "sigma2"]
                param_diff = max((abs(fast.params[k] - reference.params[k]) for k in names),
                                 default=0.0)
                f_fast = spec.forecast(y, m, fast.params, 12, (95,), 0).mean
                f_ref = spec.forecast(y, m, reference.params, 12, (95,), 0).mean
                scale = np.maximum(np.abs(f_ref), 1e-12)
                rows.append({"series": item.name, "model": spec.label(m), "end": end,
                             "gap_exact": exact_loglike(spec, y, fast.params)
                             - exact_loglike(spec, y, reference.params),
                             "gap_reference_model": own, "param_diff": param_diff,
                             "forecast_rel_diff": float(np.max(np.abs(f_fast - f_ref) / scale)),
                             "converged": fast.converged})
    table = pd.DataFrame(rows)
    print(f"  folds {len(table)}, series {table['series'].nunique()}, models "
          f"{table[['series', 'model']].drop_duplicates().shape[0]}, fast converged "
          f"{int(table['converged'].sum())}")
    for column in ("gap_exact", "gap_reference_model", "param_diff", "forecast_rel_diff"):
        q = table[column].quantile([0.0, 0.05, 0.5, 0.95, 1.0]).to_numpy()
        print(f"  {column:20s} min {q[0]:+.2e}  5% {q[1]:+.2e}  median {q[2]:+.2e}  "
              f"95% {q[3]:+.2e}  max {q[4]:+.2e}")
    worst = table.loc[table["gap_exact"].idxmin()]
    print(f"  worst log-likelihood difference (fast - reference, exact likelihood): "
          f"{worst['gap_exact']:+.3e} ({worst['series']}, {worst['model']}, end {worst['end']})")
    below = table[table["gap_reference_model"] < -1e-6]
    print(f"  folds where the reference model's own likelihood is more than 1e-6 lower at the "
          f"fast estimate: {len(below)} "
          f"({', '.join(sorted(set(below['series'])))})")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--part", choices=("compile", "fit", "search", "engine", "corpus"))
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--search-folds", type=int, default=2)
    parser.add_argument("--engine-origins", type=int, default=24)
    parser.add_argument("--origins", type=int, default=16, help="corpus origins per model")
    args = parser.parse_args()
    print(f"load: {os.getloadavg()[0]:.2f} {os.getloadavg()[1]:.2f} "
          f"{os.getloadavg()[2]:.2f} on {os.cpu_count()} cores; one BLAS thread")
    print(f"warm-up in this process: {warm_up():.2f} s")
    parts = {"compile": part_compile, "fit": lambda: part_fit(args.repeats),
             "search": lambda: part_search(args.search_folds),
             "engine": lambda: part_engine(args.engine_origins),
             "corpus": lambda: part_corpus(args.origins)}
    with threadpool_limits(limits=1):
        for name, run in parts.items():
            if args.part in (None, name):
                print(f"[{name}]")
                run()


if __name__ == "__main__":
    main()
