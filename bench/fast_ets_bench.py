"""The fast ETS estimator against the reference (statsmodels' ``ETSModel.fit``), side by side.

Parts (all by default; ``--part`` picks one):

- ``compile``: the first-call cost of the compiled likelihood, in a fresh process with an
  empty numba cache (compiling) and again with the cache filled (loading).
- ``fit``: one estimation of each ETS class on Series G (Box & Jenkins 1976, from
  ``tests/data``; season 12), fast and reference interleaved, median of ``--repeats``
  CPU seconds (and wall-clock ratios beside them):
  the engine bench's panel class (AAA) and the end-to-end run's other class (AAdN) first,
  then every other class of the
  ``ets`` family, with the log-likelihood difference (statsmodels' ``loglike`` at each
  estimate). The reference is ``ETSModel(...).fit()`` as the reference path calls it
  (with its results object) and, for comparison, with ``return_params=True`` (estimates
  only, the lean assessment's call).
- ``corpus``: the validation corpus (``tests/backtest/fast_ets_corpus.py``, at least 500
  re-estimated folds over at least 20 series, and the two generated windows where a
  direct search ended in a lower mode): per fold the fast and the reference estimate,
  statsmodels' log-likelihood at each, the largest smoothing-parameter difference and the
  largest relative difference of 12-step point forecasts; and the folds where the fast
  estimate is statsmodels' own (the replay's point, not improved by the polish).

- ``forecast``: CPU per fold of the forecasts from one estimation origin (a rolling-origin
  backtest at refit cadence 1: 36 origins on the first 120 values of Series G, horizon 12,
  levels 80 and 95), for the end-to-end run's classes and one simulated class (MAM): the compiled
  smoothing pass (``forecast_stretch``, what the engine runs) against statsmodels' pass
  (``ETSModel`` built and ``smooth`` run per fold, the route before it), the same
  forecasts built from each; then whole folds (fast estimate + forecasts) both ways.
  Blocks of the 36 origins alternate between the two routes; medians over ``--repeats``
  blocks.

    python bench/fast_ets_bench.py [--part fit] [--repeats 5] [--origins 12]

Not a test: timings depend on the machine and its load (printed first).
"""

from __future__ import annotations

import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # before numpy loads its BLAS

import argparse  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from threadpoolctl import threadpool_limits  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from first_call import print_first_call_cost  # noqa: E402

from backtest.models.fast_ets import fast_estimate, warm_up  # noqa: E402
from backtest.models.fast_fallback import FastEstimationError  # noqa: E402
from tests.backtest.fast_ets_corpus import (  # noqa: E402
    _ets,
    corpus,
    multimodal_folds,
    origins,
    reference_loglike,
)

SERIES_G = ROOT / "tests" / "data" / "series_g.csv"
#: The ETS classes of the engine bench's panel (``engine_bench.PANEL``) and of its
#: end-to-end run (``engine_bench.STORE_CANDIDATES``).
PANEL, END_TO_END = ("AAA",), ("AAA", "AAdN")
OTHERS = ("ANN", "ANA", "ANM", "AAN", "AAM", "AAdA", "AAdM", "MNN", "MNA", "MNM", "MAN",
          "MAA", "MAM", "MAdN", "MAdA", "MAdM")


def _quiet(call):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return call()


def part_compile() -> None:
    print_first_call_cost("backtest.models.fast_ets")


def _timed(call) -> tuple[object, float, float]:
    """The call's result, its CPU seconds (this process) and its wall-clock seconds."""
    cpu, wall = time.process_time(), time.perf_counter()
    out = call()
    return out, time.process_time() - cpu, time.perf_counter() - wall


def part_fit(repeats: int) -> None:
    """Medians over ``repeats``; ratios on CPU time (on a shared machine a short fit's
    wall-clock time is mostly waiting for a core), wall-clock ratios beside them."""
    y = pd.read_csv(SERIES_G).iloc[:, 1].to_numpy(float)
    ratios = {}
    for code in (*END_TO_END, *OTHERS):
        spec = _ets(code)
        times: dict[str, list[tuple[float, float]]] = {"fast": [], "full": [], "lean": []}
        for _ in range(repeats):
            fast, *t = _timed(lambda spec=spec: fast_estimate(spec, y, 12))
            times["fast"].append(t)
            reference, *t = _timed(lambda spec=spec: _quiet(
                lambda: spec.model(y, 12).fit(disp=False)))
            times["full"].append(t)
            _, *t = _timed(lambda spec=spec: _quiet(
                lambda: spec.model(y, 12).fit(disp=False, return_params=True)))
            times["lean"].append(t)
        cpu = {k: float(np.median([t[0] for t in v])) for k, v in times.items()}
        wall = {k: float(np.median([t[1] for t in v])) for k, v in times.items()}
        gap = reference_loglike(spec, y, 12, fast.params) - float(reference.llf)
        ratios[code] = cpu["full"] / cpu["fast"]
        print(f"  {spec.label(12):24s} CPU fast {cpu['fast'] * 1e3:6.2f} ms, reference "
              f"{cpu['full'] * 1e3:7.1f} ms (estimates only {cpu['lean'] * 1e3:6.1f}): "
              f"{ratios[code]:5.1f}x ({cpu['lean'] / cpu['fast']:5.1f}x); wall "
              f"{wall['full'] / wall['fast']:5.1f}x; loglik fast - reference {gap:+.2e}")
    print(f"  the panel's class: CPU ratio {min(ratios[c] for c in PANEL):.1f}x; the "
          f"end-to-end run's classes: smallest {min(ratios[c] for c in END_TO_END):.1f}x; "
          f"all classes: smallest {min(ratios.values()):.1f}x, median "
          f"{np.median(list(ratios.values())):.1f}x")


def _statsmodels_pass_forecast(spec, y, params, horizon, levels, seed):
    """The forecasts from statsmodels' smoothing pass: a model built, ``smooth`` run, its
    states put in the compiled pass's layout (level, trend, season)."""
    model = spec.model(y, 12)
    fitted, states = model.smooth(np.array([params[n] for n in model.param_names]),
                                  return_raw=True)
    layout = np.column_stack([states[c].to_numpy(float) if c in states else np.zeros(len(y))
                              for c in ("level", "trend", "seasonal")])
    return spec.forecasts_from_pass(y, 12, params, fitted.to_numpy(float), layout, [len(y)],
                                    horizon, levels, [seed])[0]


def _compiled_pass_forecast(spec, y, params, horizon, levels, seed):
    """The forecasts as the engine makes them (the compiled smoothing pass)."""
    return spec.forecast_stretch(y, 12, params, [len(y)], horizon, levels, [seed])[0]


def part_forecast(repeats: int) -> None:
    """CPU per fold, the compiled pass against statsmodels' pass, blocks interleaved."""
    g = pd.read_csv(SERIES_G).iloc[:, 1].to_numpy(float)[:120]
    ends, horizon, levels = range(84, 120), 12, (80, 95)
    routes = {"compiled": _compiled_pass_forecast, "statsmodels": _statsmodels_pass_forecast}
    for code in (*END_TO_END, "MAM"):
        spec = _ets(code)
        params = {end: fast_estimate(spec, g[:end], 12).params for end in ends}

        def block(route, estimate: bool, spec=spec, params=params):
            for end in ends:
                p = fast_estimate(spec, g[:end], 12).params if estimate else params[end]
                route(spec, g[:end], p, horizon, levels, end)

        cpu: dict[tuple[str, bool], list[float]] = {}
        for _ in range(repeats):
            for estimate in (False, True):
                for name, route in routes.items():
                    seconds = _timed(lambda r=route, e=estimate: block(r, e))[1]
                    cpu.setdefault((name, estimate), []).append(seconds / len(ends))
        ms = {key: float(np.median(v)) * 1e3 for key, v in cpu.items()}
        for estimate, what in ((False, "forecast"), (True, "whole fold")):
            new, old = ms[("compiled", estimate)], ms[("statsmodels", estimate)]
            print(f"  {spec.label(12):17s} {what:10s} CPU per fold: statsmodels pass "
                  f"{old:6.3f} ms, compiled pass {new:6.3f} ms: {old / new:5.1f}x, "
                  f"{old - new:6.3f} ms saved")


def part_corpus(per_spec: int) -> None:
    rows, failures = [], []
    folds = [(item.name, item.values[:end], item.season_length, spec, end)
             for item in corpus("full") for spec in item.specs
             for end in origins(item, spec, per_spec)]
    folds += [(name, y, 12, spec, len(y)) for name, y, spec in multimodal_folds()]
    for name, y, m, spec, end in folds:
        began = time.perf_counter()
        try:
            fast = fast_estimate(spec, y, m)
        except FastEstimationError as exc:  # the engine falls back on such a fold
            failures.append(f"{name}, {spec.label(m)}, end {end}: {exc}")
            continue
        fast_s = time.perf_counter() - began
        began = time.perf_counter()
        reference = _quiet(lambda spec=spec, y=y, m=m: spec.reference_fit(y, m))
        reference_s = time.perf_counter() - began
        smoothing = [k for k in fast.params if k.startswith(("smoothing", "damping"))]
        param_diff = max(abs(fast.params[k] - reference.params[k]) for k in smoothing)
        f_fast = spec.forecast(y, m, fast.params, 12, (95,), 0).mean
        f_ref = spec.forecast(y, m, reference.params, 12, (95,), 0).mean
        scale = np.maximum(np.abs(f_ref), 1e-12)
        rows.append({"series": name, "model": spec.label(m), "end": end,
                     "gap": reference_loglike(spec, y, m, fast.params)
                     - reference_loglike(spec, y, m, reference.params),
                     "param_diff": param_diff,
                     "forecast_rel_diff": float(np.max(np.abs(f_fast - f_ref) / scale)),
                     "identical": all(fast.params[k] == reference.params[k] for k in fast.params),
                     "converged": fast.converged, "fast_s": fast_s,
                     "reference_s": reference_s})
    table = pd.DataFrame(rows)
    print(f"  folds {len(table)}, series {table['series'].nunique()}, models "
          f"{table[['series', 'model']].drop_duplicates().shape[0]}, fast converged "
          f"{int(table['converged'].sum())}; total seconds fast "
          f"{table['fast_s'].sum():.1f}, reference {table['reference_s'].sum():.1f} "
          f"({table['reference_s'].sum() / table['fast_s'].sum():.1f}x)")
    for column in ("gap", "param_diff", "forecast_rel_diff"):
        q = table[column].quantile([0.0, 0.05, 0.5, 0.95, 1.0]).to_numpy()
        print(f"  {column:18s} min {q[0]:+.2e}  5% {q[1]:+.2e}  median {q[2]:+.2e}  "
              f"95% {q[3]:+.2e}  max {q[4]:+.2e}")
    worst = table.loc[table["gap"].idxmin()]
    print(f"  worst log-likelihood difference (fast - reference, statsmodels' loglike): "
          f"{worst['gap']:+.3e} ({worst['series']}, {worst['model']}, end {worst['end']})")
    print(f"  folds where the fast estimate is statsmodels' own, bit for bit (the polish "
          f"found nothing higher): {int(table['identical'].sum())}")
    better = table[table["gap"] > 1e-6]
    print(f"  folds where the fast optimum is more than 1e-6 higher: {len(better)}; "
          f"more than 1e-6 lower: {int((table['gap'] < -1e-6).sum())}")
    for _, row in table[table["gap"] < -1e-6].iterrows():
        print(f"    lower: {row['series']}, {row['model']}, end {row['end']}: {row['gap']:+.3e}")
    print(f"  folds where the fast estimator failed (the engine falls back): {len(failures)}")
    for failure in failures:
        print(f"    {failure}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--part", choices=("compile", "fit", "forecast", "corpus"))
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--origins", type=int, default=12, help="corpus origins per model")
    args = parser.parse_args()
    print(f"load: {os.getloadavg()[0]:.2f} {os.getloadavg()[1]:.2f} "
          f"{os.getloadavg()[2]:.2f} on {os.cpu_count()} cores; one BLAS thread")
    print(f"warm-up in this process: {warm_up():.2f} s")
    parts = {"compile": part_compile, "fit": lambda: part_fit(args.repeats),
             "forecast": lambda: part_forecast(args.repeats),
             "corpus": lambda: part_corpus(args.origins)}
    with threadpool_limits(limits=1):
        for name, run in parts.items():
            if args.part in (None, name):
                print(f"[{name}]")
                run()


if __name__ == "__main__":
    main()
