"""Engine speed against the forecasting loop a user writes by hand with statsmodels.

Part "engine" runs, in this one process, the hand loop and the engine on the same data:

A. log Series G (Box & Jenkins 1976, ``tests/data/series_g.csv``) with the airline model
   ARIMA(0,1,1)×(0,1,1), season 12;
B. a generated panel of monthly series with three candidates: the airline model (log),
   ARIMA(1,0,0)×(0,1,1), season 12, with drift (log) and ETS(A,A,A), season 12.

For refit cadence 1, 12 and estimate-once it prints seconds, forecasts (origins x
candidates) per second, the speed ratio to the hand loop at the same cadence and to the
hand loop that re-estimates at every origin, and the largest absolute difference between
the two sets of point forecasts and 80 %/95 % bounds (original scale). The engine runs
under the plan's default ``assessment: "full"`` (per-fold standard errors and full-series
diagnostics, which the hand loop does not compute) and under ``"lean"`` (same forecasts
and scores without them): lean against the hand loop compares like with like. Timings
come twice: wall clock, which other processes on the machine inflate, and an estimate for
an idle machine from CPU times (this process's plus the busiest worker's). The hand loop
at cadence k fits ``ARIMA(y[:t]).fit()`` / ``ETSModel(y[:t]).fit()`` at a re-estimating
origin and, in between, forecasts with the kept parameters from the data since the start
of the last estimation window (statsmodels' ``filter``/``smooth`` then
``get_forecast``/``get_prediction``), which is what the engine computes. After each block,
estimate-once in parts: the one fit and the forecasts from the later origins, timed apart,
with the forecast-phase ratio and the bound Amdahl's law puts on the whole-run ratio (both
loops pay one fit). Then: a warm start row (labelled; results differ slightly by design),
the fixed costs of one task, the closed-form benchmarks' throughput, and the peak memory
of this process and its workers.

Part "storage" runs generated monthly series (1,000 by default) x 8 candidates (the four
benchmarks, ETS(A,A,A), ETS(A,Ad,N), the airline model and ARIMA(1,0,0)(0,1,1) with drift,
both on logs) x 36 origins x H = 12 at cadence 12 (``--refit``) under the reference
estimator (``--estimator``) end to end in a fresh SQLite store: the
series versions are saved, one run queued, and the service's job worker claims it,
computes it and stores each series' results in its own transaction, printing wall time,
folds per second, peak resident memory of the process and its workers, and the time
extrapolated to 1,000 series, and the CPU the job worker's own process spends per series in
each of its stages (the engine's per-series assessment and the store's writing; the pool
workers fit the models). Theta is left out of the mix: statsmodels estimates it with
two state-space fits per origin, and as a closed-form family it re-estimates at all 36.

Part "summary" times what the full assessment adds to a fast run at cadence 1, per fold
and per series, with the per-fold summary computed from statsmodels' results object and
from the compiled likelihood side by side (:func:`summary_part`), then the full-series
diagnostics per (series, candidate) the same two ways (:func:`diagnostics_rows`).

    python bench/engine_bench.py [--jobs 2] [--series 20] [--max-origins 24]
    python bench/engine_bench.py --part storage [--series 100] [--store-assessment lean]
        [--refit 1] [--estimator fast]
    python bench/engine_bench.py --part summary [--series 3]

Not a test: timings depend on the machine and its load.
"""

from __future__ import annotations

import argparse
import gc
import importlib
import os
import resource
import sys
import tempfile
import threading
import time
import warnings
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import psutil
from joblib.externals.loky import get_reusable_executor
from statsmodels import __version__ as sm_version
from statsmodels.tsa.arima.model import ARIMA
from statsmodels.tsa.exponential_smoothing.ets import ETSModel
from threadpoolctl import threadpool_limits

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from backtest.assessment import fit_report, fold_fit_summary  # noqa: E402
from backtest.candidates import parse_candidates  # noqa: E402
from backtest.diagnosis import full_series_diagnostics  # noqa: E402
from backtest.engine import run_backtest  # noqa: E402
from backtest.models.benchmarks import BenchmarkSpec  # noqa: E402
from backtest.models.fast_arima import warm_up  # noqa: E402
from backtest.parallel import iter_tasks  # noqa: E402
from backtest.plan import parse_plan  # noqa: E402
from backtest.series import Series, make_series  # noqa: E402

HORIZON = 12
LEVELS = (80, 95)
CADENCES: tuple[int | str, ...] = (1, 12, "once")
SERIES_G = Path(__file__).resolve().parents[1] / "tests" / "data" / "series_g.csv"
AIRLINE = {"family": "arima", "order": [0, 1, 1], "seasonal": {"order": [0, 1, 1]},
           "transform": "log"}
PANEL = [AIRLINE,
         {"family": "arima", "order": [1, 0, 0], "seasonal": {"order": [0, 1, 1]},
          "deterministic": "drift", "transform": "log"},
         {"family": "ets", "error": "additive", "trend": "additive", "season": "additive"}]


#: statsmodels' L-BFGS-B options for a fit run to a strict stop (its default: pgtol 1e-5,
#: factr 1e7). statsmodels adds keys to the dict it is given, so each fit gets a copy.
STRICT_STOP = {"pgtol": 1e-10, "factr": 10.0, "maxiter": 2000}


@dataclass(frozen=True)
class HandModel:
    """How the hand loop fits, filters and forecasts one candidate with statsmodels."""

    build: Callable[[np.ndarray], object]
    log: bool

    def fit(self, z: np.ndarray, strict: bool = False, start: np.ndarray | None = None):
        """statsmodels' fit with its defaults, or run to :data:`STRICT_STOP`; from its own
        start values or from ``start``."""
        model = self.build(z)
        if isinstance(model, ETSModel):
            return model.fit(start_params=start, disp=False,
                             **(dict(STRICT_STOP) if strict else {}))
        options = {"method_kwargs": dict(STRICT_STOP)} if strict else {}
        return model.fit(start_params=start, **options)

    def forecast(self, results, z: np.ndarray, params=None) -> np.ndarray:
        """Rows: mean, then lower and upper per level, on the original scale."""
        if params is not None:
            model = self.build(z)
            results = (model.smooth(params) if isinstance(model, ETSModel)
                       else model.filter(params))
        if isinstance(results.model, ETSModel):
            n = len(z)
            prediction = results.get_prediction(start=n, end=n + HORIZON - 1)
            frames = [prediction.summary_frame(alpha=1 - lv / 100) for lv in LEVELS]
            rows = [frames[0]["mean"]] + [f[c] for f in frames for c in ("pi_lower", "pi_upper")]
        else:
            prediction = results.get_forecast(HORIZON)
            bounds = [prediction.conf_int(alpha=1 - lv / 100) for lv in LEVELS]
            rows = [prediction.predicted_mean] + [b[:, i] for b in bounds for i in (0, 1)]
        out = np.asarray(rows, dtype=float)
        return np.exp(out) if self.log else out


HAND = [
    HandModel(lambda z: ARIMA(z, order=(0, 1, 1), seasonal_order=(0, 1, 1, 12)), True),
    HandModel(lambda z: ARIMA(z, order=(1, 0, 0), seasonal_order=(0, 1, 1, 12), trend="t"),
              True),
    HandModel(lambda z: ETSModel(pd.Series(z), error="add", trend="add", seasonal="add",
                                 seasonal_periods=12), False),
]


def hand_loop(values: np.ndarray, hand: HandModel, ends: list[int], cadence: int | str
              ) -> np.ndarray:
    """Forecasts from every origin, shape ``(n_origins, 1 + 2 * len(LEVELS), HORIZON)``."""
    z = np.log(values) if hand.log else values
    out, params = [], None
    for i, end in enumerate(ends):
        if (i == 0) if cadence == "once" else (i % cadence == 0):
            results = hand.fit(z[:end])
            params = results.params
            out.append(hand.forecast(results, z[:end]))
        else:
            out.append(hand.forecast(None, z[:end], params))
    return np.array(out)


def engine_forecasts(result, candidate_ids: list[str]) -> dict[tuple[str, str], np.ndarray]:
    """Engine folds as the hand loop's arrays, by (series, candidate)."""
    out = {}
    for sr in result.series:
        for cid in candidate_ids:
            folds = [f for f in sr.folds if f.candidate_id == cid]
            out[sr.series["key"], cid] = np.array(
                [[f.point] + [b[lv] for lv in LEVELS for b in (f.lower, f.upper)]
                 for f in folds], dtype=float)
    return out


@dataclass(frozen=True)
class Clock:
    """Wall time and CPU time of this process and of each of its (worker) children."""

    wall: float
    cpu: dict[int, float]

    @classmethod
    def now(cls) -> Clock:
        me = psutil.Process()
        cpu = {}
        for process in (me, *me.children(recursive=True)):
            try:
                times = process.cpu_times()
            except psutil.NoSuchProcess:
                continue
            cpu[process.pid] = times.user + times.system
        return cls(time.perf_counter(), cpu)

    def since(self, start: Clock) -> tuple[float, float]:
        """Wall seconds, and the estimate for an idle machine: this process's CPU seconds
        plus those of the busiest worker (tasks run side by side)."""
        used = {pid: t - start.cpu.get(pid, 0.0) for pid, t in self.cpu.items()}
        own = used.pop(os.getpid())
        return self.wall - start.wall, own + max(used.values(), default=0.0)


def _warm_pool(jobs: int) -> None:
    """Start the engine's worker processes (the pool the engine reuses), import the engine
    and load the compiled estimator in them, so that the timings are of a running service
    (a fresh pool spends seconds importing first)."""
    if jobs > 1:
        list(iter_tasks(importlib.import_module, [("backtest.diagnosis",)] * 2 * jobs,
                        n_jobs=jobs))
        list(iter_tasks(warm_up, [()] * 2 * jobs, n_jobs=jobs))


def _load() -> str:
    """The machine's 1-minute load average: other processes slow both loops."""
    return f"{os.getloadavg()[0]:.1f}"


def _quiet(fn: Callable, *args):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return fn(*args)


def compare(label: str, series: list[Series], specs: list[dict], hands: list[HandModel],
            first: int, max_origins: int | None, jobs: int, assessments: tuple[str, ...]
            ) -> dict[tuple[int | str, str], float]:
    """Print one block of rows: every cadence, hand loop against the engine under each
    assessment; return the CPU-estimate ratios to the same-cadence hand loop."""
    candidates = parse_candidates(specs)
    ids = [c.id for c in candidates]
    n_obs = len(series[0])
    ends = list(range(first, n_obs - HORIZON + 1))[-(max_origins or n_obs):]
    forecasts = len(ends) * len(series) * len(specs)
    print(f"\n{label}: {len(series)} series x {len(specs)} candidates x {len(ends)} origins, "
          f"horizon {HORIZON}, engine n_jobs={jobs}; load average {_load()}")
    print(f"{'':14} | {'wall clock (shared machine)':^55} | "
          f"{'CPU estimate for an idle machine':^46} |")
    print(f"{'cadence':>8} {'assess':>5} | {'hand s':>8} {'engine s':>8} {'hand f/s':>8} "
          f"{'eng f/s':>8} {'x same':>6} {'x refit1':>8} | {'hand s':>8} {'engine s':>8} "
          f"{'eng f/s':>8} {'x same':>6} {'x refit1':>8} | {'max |diff|':>10}  load")
    every_origin, ratios = None, {}
    for cadence in CADENCES:
        start = Clock.now()
        hand = {(s.key, cid): _quiet(hand_loop, np.asarray(s.values, float), h, ends, cadence)
                for s in series for cid, h in zip(ids, hands)}
        hand_s = Clock.now().since(start)
        every_origin = every_origin or hand_s
        for assessment in assessments:
            plan = parse_plan({"horizon": HORIZON, "first_origin": {"train_size": first},
                               "max_origins": max_origins, "refit": cadence,
                               "levels": list(LEVELS), "assessment": assessment})
            _warm_pool(jobs)
            start = Clock.now()
            result = run_backtest(series, candidates, plan, n_jobs=jobs)
            engine_s = Clock.now().since(start)
            ours = engine_forecasts(result, ids)
            diff = max(float(np.max(np.abs(ours[k] - hand[k]))) for k in hand)
            ratios[cadence, assessment] = hand_s[1] / engine_s[1]
            cells = [f"{cadence!s:>8} {assessment:>5} |"]
            for i in (0, 1):
                hand_rate = f"{forecasts / hand_s[i]:8.1f} " if i == 0 else ""
                cells.append(f"{hand_s[i]:8.2f} {engine_s[i]:8.2f} {hand_rate}"
                             f"{forecasts / engine_s[i]:8.1f} {hand_s[i] / engine_s[i]:6.2f} "
                             f"{every_origin[i] / engine_s[i]:8.2f} |")
            print(" ".join(cells) + f" {diff:10.2e}  {_load()}")
    return ratios


def once_phases(series: list[Series], specs: list[dict], hands: list[HandModel], first: int,
                max_origins: int | None, jobs: int, whole_run: dict[str, float]) -> None:
    """Estimate-once split into the one fit and the forecasts from the later origins, timed
    in this process (CPU), and the bound Amdahl's law puts on the whole-run ratio: per
    core, and times the engine's worker count for the CPU estimate (the hand loop runs on
    one core, the engine's tasks on ``jobs``)."""
    candidates = parse_candidates(specs)
    n_obs = len(series[0])
    ends = list(range(first, n_obs - HORIZON + 1))[-(max_origins or n_obs):]
    later = ends[1:]
    parts = dict.fromkeys(("hand fit", "hand later", "engine fit", "engine later"), 0.0)
    for s in series:
        values = np.asarray(s.values, float)
        for candidate, hand in zip(candidates, hands):
            z = np.log(values) if hand.log else values
            spec, m = candidate.spec, s.season_length
            started = time.process_time()
            results = _quiet(hand.fit, z[:ends[0]])
            _quiet(hand.forecast, results, z[:ends[0]])
            parts["hand fit"] += time.process_time() - started
            started = time.process_time()
            for end in later:
                _quiet(hand.forecast, None, z[:end], results.params)
            parts["hand later"] += time.process_time() - started
            started = time.process_time()
            fit, _ = _quiet(spec.fit_forecast, z[:ends[0]], m, HORIZON, LEVELS, 0)
            parts["engine fit"] += time.process_time() - started
            started = time.process_time()
            _quiet(spec.forecast_stretch, z[:later[-1]], m, fit.params, later, HORIZON,
                   LEVELS, [0] * len(later))
            parts["engine later"] += time.process_time() - started
    count = len(later) * len(series) * len(specs)
    phase = parts["hand later"] / parts["engine later"]
    bound = ((parts["hand fit"] + parts["hand later"])
             / (parts["engine fit"] + parts["engine later"]))
    ceiling = (parts["hand fit"] + parts["hand later"]) / parts["engine fit"]
    print(f"  estimate-once in parts (one process, CPU s): fits hand {parts['hand fit']:.2f}, "
          f"engine {parts['engine fit']:.2f}; forecasts from the {count} later origins hand "
          f"{parts['hand later']:.2f}, engine {parts['engine later']:.3f} "
          f"({count / parts['engine later']:,.0f} forecasts/s)")
    print(f"  forecast-phase ratio {phase:.1f}x; Amdahl bound on the whole-run ratio "
          f"(hand fit + forecasts) / (engine fit + forecasts) = {bound:.1f}x per core (at "
          f"most {ceiling:.1f}x even with free forecasts), {jobs * bound:.1f}x with {jobs} "
          f"workers; measured whole run (CPU estimate): "
          + ", ".join(f"{k} {v:.2f}x" for k, v in whole_run.items()))


def warm_start_row(series: list[Series], first: int, jobs: int) -> None:
    candidates = parse_candidates([AIRLINE])
    timings = {}
    for warm in (False, True):
        plan = parse_plan({"horizon": HORIZON, "first_origin": {"train_size": first},
                           "refit": 1, "warm_start": warm, "levels": list(LEVELS)})
        _warm_pool(jobs)
        started = time.perf_counter()
        result = run_backtest(series, candidates, plan, n_jobs=jobs)
        timings[warm] = time.perf_counter() - started
        folds = engine_forecasts(result, [candidates[0].id])
        timings[warm, "folds"] = next(iter(folds.values()))
    gap = float(np.max(np.abs(timings[True, "folds"] - timings[False, "folds"])))
    print(f"\nwarm start (plan warm_start=true, Series G, cadence 1): {timings[True]:.2f} s "
          f"against {timings[False]:.2f} s cold ({timings[False] / timings[True]:.2f}x); "
          f"forecasts differ from cold by up to {gap:.2e} (different optima, by design)")


def task_costs(values: np.ndarray, series: Series) -> None:
    """Fixed costs inside one (series, candidate) task of the airline model, in ms."""
    candidate = parse_candidates([AIRLINE])[0]
    spec, z = candidate.spec, np.log(values)
    hand, train = HAND[0], z[:-HORIZON]

    def ms(fn: Callable, repeat: int = 5) -> float:
        _quiet(fn)
        started = time.process_time()
        for _ in range(repeat):
            _quiet(fn)
        return (time.process_time() - started) / repeat * 1e3

    fit = _quiet(spec.fit, train, 12)
    fresh = [_quiet(spec.fit, train, 12) for _ in range(5)]
    ends = list(range(60, len(z) + 1))
    rows = {
        "hand loop: fit() + get_forecast()": ms(lambda: hand.forecast(hand.fit(train), train)),
        "hand loop: filter(params) + get_forecast()":
            ms(lambda: hand.forecast(None, train, fit.raw.params)),
        "engine: fit (same optimiser path, filter only)": ms(lambda: spec.fit(train, 12)),
        # statsmodels caches the covariance on the results: each call needs a fresh fit.
        "engine: fold fit summary (numerical Hessian s.e.)":
            ms(lambda: fold_fit_summary(spec, fresh.pop(), train, 12), 4),
        "engine: full-series diagnostics (once per task)":
            ms(lambda: full_series_diagnostics(series, candidate), 2),
        f"engine: one-pass forecast, per origin ({len(ends)} origins)":
            ms(lambda: spec.forecast_stretch(z, 12, fit.params, ends, HORIZON, LEVELS,
                                             [0] * len(ends))) / len(ends),
    }
    print("\nfixed costs inside one task (airline model, 132 observations, CPU ms):")
    for name, value in rows.items():
        print(f"  {name:<58} {value:9.2f}")


def benchmark_throughput(series: list[Series], first: int) -> None:
    methods = ("naive", "seasonal_naive", "drift", "mean")
    n_obs = len(series[0])
    windows = [(0, end) for end in range(first, n_obs - HORIZON + 1)]
    count = len(windows) * len(series) * len(methods)
    started = time.process_time()
    for s in series:
        y = np.asarray(s.values, dtype=float)
        for method in methods:
            BenchmarkSpec(method).fit_forecast_windows(y, 12, windows, HORIZON, LEVELS,
                                                       [0] * len(windows))
    family_rate = count / (time.process_time() - started)
    plan = parse_plan({"horizon": HORIZON, "first_origin": {"train_size": first},
                       "levels": list(LEVELS)})
    candidates = parse_candidates([{"family": "benchmark", "method": m} for m in methods])
    started = time.process_time()
    run_backtest(series, candidates, plan, n_jobs=1)
    engine_rate = count / (time.process_time() - started)
    print(f"\nclosed-form benchmarks, one core, {count} forecasts (4 methods, {len(series)} "
          f"series, {len(windows)} origins):\n  family (all windows per call): "
          f"{family_rate:,.0f} forecasts/s\n  engine end to end (folds, scores, ranking, "
          f"diagnostics): {engine_rate:,.0f} forecasts/s")


def peak_memory() -> None:
    get_reusable_executor().shutdown(wait=True)
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    workers = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    print(f"\npeak resident memory: this process {own:.0f} MiB, largest worker {workers:.0f} MiB")


def _cpu_used(start: Clock, end: Clock) -> dict[int, float]:
    """CPU seconds each process (this one and its children) used between two clocks."""
    return {pid: t - start.cpu.get(pid, 0.0) for pid, t in end.cpu.items()
            if t - start.cpu.get(pid, 0.0) > 0.0}


def panel(n_series: int, n_obs: int = 120) -> list[Series]:
    """Positive monthly series: trend, a drifting seasonal pattern and noise on the log scale."""
    rng = np.random.default_rng(2024)
    t = np.arange(n_obs)
    out = []
    for i in range(n_series):
        season = rng.normal(0, 0.12, 12)
        level = 4 + rng.uniform(-0.5, 0.5) + rng.uniform(0, 0.012) * t
        noise = np.cumsum(rng.normal(0, 0.02, n_obs)) + rng.normal(0, 0.03, n_obs)
        values = np.exp(level + season[t % 12] + noise)
        out.append(make_series(f"panel/{i:02d}", "P1M",
                               [(f"{2010 + k // 12}-{k % 12 + 1:02d}", v)
                                for k, v in enumerate(values)]))
    return out


def engine_part(args: argparse.Namespace) -> None:
    values = pd.read_csv(SERIES_G).iloc[:, 1].to_numpy(float)
    series_g = make_series("series_g", "P1M", [(f"{1949 + k // 12}-{k % 12 + 1:02d}", v)
                                               for k, v in enumerate(values)])
    assessments = tuple(args.assessment.split(","))
    blocks = [("A. log Series G, airline model", [series_g], [AIRLINE], HAND[:1], 60, None),
              ("B. generated panel", panel(args.series or 20), PANEL, HAND, 48,
               args.max_origins)]
    for label, series, specs, hands, first, max_origins in blocks:
        ratios = compare(label, series, specs, hands, first, max_origins, args.jobs,
                         assessments)
        once_phases(series, specs, hands, first, max_origins, args.jobs,
                    {a: ratios["once", a] for a in assessments})
    warm_start_row([series_g], 60, args.jobs)
    task_costs(values, series_g)
    benchmark_throughput(panel(args.series or 20), 24)
    peak_memory()


STORE_CANDIDATES = [
    {"family": "benchmark", "method": "seasonal_naive"},
    {"family": "benchmark", "method": "naive"},
    {"family": "benchmark", "method": "drift"},
    {"family": "benchmark", "method": "mean"},
    {"family": "ets", "error": "additive", "trend": "additive", "season": "additive"},
    {"family": "ets", "error": "additive", "trend": "damped", "season": "none"},
    AIRLINE,
    {"family": "arima", "order": [1, 0, 0], "seasonal": {"order": [0, 1, 1]},
     "deterministic": "drift", "transform": "log"},
]
STORE_ORIGINS = 36


#: The job worker's per-series stages, timed in this process: (label, module, function).
#: Indented labels are parts of the stage above them.
MAIN_STAGES = (
    ("assess one series (engine)", "backtest.engine", "_series_result"),
    ("  scores (score_candidate)", "backtest.engine", "score_candidate"),
    ("  scores on common ground", "backtest.engine", "on_common_ground"),
    ("  evidence (DM, MCS, calibration)", "backtest.engine", "series_evidence"),
    ("  ranking", "backtest.engine", "rank_candidates"),
    ("  evidence to JSON", "backtest.engine", "to_jsonable"),
    ("store one series (storage)", "storage.runs.queue", "write_series_result"),
    ("  rows (unit_rows)", "storage.results.store", "unit_rows"),
    ("  inserts", "storage.results.store", "insert_rows"),
    ("  audit digest (unit_digest)", "storage.results.store", "unit_digest"),
)


class StageClock:
    """CPU seconds of the calling thread spent in each of :data:`MAIN_STAGES`, measured
    by wrapping those functions for the duration of the block (a bench-only patch)."""

    def __init__(self) -> None:
        self.seconds = dict.fromkeys((label for label, _, _ in MAIN_STAGES), 0.0)
        self._saved: list[tuple[object, str, Callable]] = []

    def __enter__(self) -> StageClock:
        for label, module_name, name in MAIN_STAGES:
            module = importlib.import_module(module_name)
            original = getattr(module, name)
            self._saved.append((module, name, original))
            setattr(module, name, self._timed(label, original))
        return self

    def __exit__(self, *exc: object) -> None:
        for module, name, original in reversed(self._saved):
            setattr(module, name, original)

    def _timed(self, label: str, fn: Callable) -> Callable:
        def timed(*args, **kwargs):
            started = time.thread_time()
            try:
                return fn(*args, **kwargs)
            finally:
                self.seconds[label] += time.thread_time() - started
        return timed

    def report(self, n_series: int, own: float) -> None:
        top = sum(t for label, t in self.seconds.items() if not label.startswith(" "))
        print("  job worker's process, CPU ms per series by stage (thread CPU time):")
        for label, seconds in self.seconds.items():
            print(f"    {label:<36} {seconds / n_series * 1e3:8.1f}")
        print(f"    {'other (pool traffic, progress, ...)':<36} "
              f"{(own - top) / n_series * 1e3:8.1f}")
        print(f"    {'whole process':<36} {own / n_series * 1e3:8.1f}  (target <= 350)")


class PeakMemory:
    """Peak of the summed resident memory of this process and its children, sampled, and
    each process's own peak (``by_process``: this process first)."""

    def __init__(self, every: float = 0.25) -> None:
        self.peak, self._every = 0, every
        self.by_process: dict[int, int] = {}
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._sample, daemon=True)

    def __enter__(self) -> PeakMemory:
        self._thread.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self._stop.set()
        self._thread.join()

    def _sample(self) -> None:
        me = psutil.Process()
        while not self._stop.wait(self._every):
            total = 0
            for process in (me, *me.children(recursive=True)):
                try:
                    rss = process.memory_info().rss
                except psutil.NoSuchProcess:
                    continue
                total += rss
                self.by_process[process.pid] = max(self.by_process.get(process.pid, 0), rss)
            self.peak = max(self.peak, total)


def storage_part(args: argparse.Namespace) -> None:
    """Generated monthly series x 8 candidates x 36 origins x H = 12 at cadence ``--refit``
    (12 by default) under the plan's ``--estimator``, queued as
    one run in a fresh SQLite store and computed by the service's own job worker
    (``service.worker.loop.Worker``): the pending series go through the pool together and each
    series' results are stored in their own transaction as soon as they are complete."""
    from service.settings import Settings
    from service.worker.loop import Worker
    from storage.db import Run, make_engine, session_factory, upgrade
    from storage.runs import queue_run
    from storage.series import save_series_version

    series = panel(args.series or 1000)
    candidates = parse_candidates(STORE_CANDIDATES)
    plan = parse_plan({"horizon": HORIZON, "max_origins": STORE_ORIGINS, "refit": args.refit,
                       "levels": list(LEVELS), "assessment": args.store_assessment,
                       "estimator": args.estimator})
    folds = len(series) * len(candidates) * STORE_ORIGINS
    print(f"\nstorage: {len(series)} series x {len(candidates)} candidates (the 4 benchmarks, "
          f"ETS(A,A,A), ETS(A,Ad,N), 2 seasonal ARIMA) x {STORE_ORIGINS} origins x "
          f"H = {HORIZON}, cadence {args.refit}, estimator {args.estimator}, assessment "
          f"{args.store_assessment}, one run computed "
          f"by the job worker with worker_jobs={args.jobs}, fresh SQLite; load average "
          f"{_load()}")
    _warm_pool(args.jobs)
    with tempfile.TemporaryDirectory() as directory, PeakMemory() as memory:
        url = f"sqlite:///{directory}/bench.db"
        started = time.perf_counter()
        upgrade(url)
        engine = make_engine(url)
        sessions = session_factory(engine)
        with sessions.begin() as session:
            versions = [save_series_version(session, s, actor="bench").version.id
                        for s in series]
            run_id = queue_run(session, series_version_ids=versions, candidates=candidates,
                               plan=plan, actor="bench").id
        queued = time.perf_counter()
        # The report the worker would render afterwards is not part of what is timed.
        worker = Worker(Settings(database_url=url, worker_jobs=args.jobs,
                                 prerender_reports=False), sessions, "bench")
        clock = Clock.now()
        with StageClock() as stages:
            if not worker.run_once():
                raise SystemExit("the worker found no run")
        computed = time.perf_counter() - queued
        cpu = _cpu_used(clock, Clock.now())
        with sessions.begin() as session:
            status = session.get(Run, run_id).status
        wall = time.perf_counter() - started
        size = Path(directory, "bench.db").stat().st_size / 2**20
        engine.dispose()
    scale = 1000 / len(series)
    # The worker stores results while its pool computes, so on an idle machine the run
    # takes the longer of: all CPU seconds shared over the cores, the busiest process.
    own, pool = cpu[os.getpid()], [t for pid, t in cpu.items() if pid != os.getpid()]
    idle = max(sum(cpu.values()) / (os.cpu_count() or 1), own, max(pool, default=0.0))
    print(f"  run {status}: wall {wall:.1f} s (of which the worker's run {computed:.1f} s), "
          f"{folds / wall:.1f} folds/s, {folds:,} folds, database {size:.0f} MiB; load "
          f"average {_load()}")
    print(f"  worker's run in CPU seconds: this process {own:.1f}, pool "
          f"{' + '.join(f'{t:.1f}' for t in sorted(pool, reverse=True))}; estimate for an "
          f"idle {os.cpu_count()}-core machine {idle:.1f} s")
    stages.report(len(series), own)
    each = [memory.by_process.pop(os.getpid(), 0),
            *sorted(memory.by_process.values(), reverse=True)]
    print(f"  peak resident memory, this process and its workers together: "
          f"{memory.peak / 2**20:.0f} MiB (each process's own peak: this process "
          f"{each[0] / 2**20:.0f}, workers {', '.join(f'{b / 2**20:.0f}' for b in each[1:])})")
    print(f"  per 1,000 series: wall {wall * scale / 60:.1f} min, idle-machine estimate "
          f"{(idle + wall - computed) * scale / 60:.1f} min"
          + ("" if scale == 1 else " (extrapolated, linear in series)")
          + " (target: under 15 min, under 2 GiB)")


def summary_part(args: argparse.Namespace) -> None:
    """What the plan's full assessment adds per series under the fast estimator: the four
    model candidates of part storage x 36 origins at cadence 1 on generated series, each
    fold two ways, interleaved (order alternating per fold), timed in CPU seconds:
    statsmodels' path (the fit with statsmodels' results object, then the summary's
    complex-step Hessian and Kalman residuals on it; for ETS the results object computes
    the Hessian as it is built) and the compiled path (the lean fit, without a results
    object, then the summary from the compiled likelihood). Full minus lean is the
    statsmodels fit minus the lean fit plus its summary, and the compiled summary alone."""
    series = panel(args.series or 3)
    specs = [c.spec for c in parse_candidates(STORE_CANDIDATES[4:])]
    ways = ("statsmodels", "compiled")
    fit_s = dict.fromkeys(ways, 0.0)
    summary_s = {(f, w): 0.0 for f in ("arima", "ets") for w in ways}
    folds = dict.fromkeys(("arima", "ets"), 0)

    def run(way: str, spec, window: np.ndarray, m: int) -> None:
        gc.collect()  # each way's garbage is collected outside the timings
        started = time.process_time()
        fit, _ = _quiet(lambda: spec.fit_forecast(window, m, HORIZON, LEVELS, 0,
                                                  estimator="fast",
                                                  keep_raw=way == "statsmodels"))
        fitted = time.process_time()
        _quiet(lambda: fold_fit_summary(*spec.assessed(fit), window, m))
        fit_s[way] += fitted - started
        summary_s[spec.family, way] += time.process_time() - fitted

    for s in series:
        n = len(s)
        for spec in specs:
            z = spec.transform.forward(np.asarray(s.values, dtype=float))
            for i, end in enumerate(range(n - HORIZON - STORE_ORIGINS + 1, n - HORIZON + 1)):
                for way in ways[i % 2:] + ways[:i % 2]:
                    run(way, spec, z[:end], s.season_length)
                folds[spec.family] += 1
    total = sum(folds.values())
    summary = {w: sum(summary_s[f, w] for f in folds) for w in ways}
    extra = {"statsmodels": fit_s["statsmodels"] - fit_s["compiled"] + summary["statsmodels"],
             "compiled": summary["compiled"]}
    print(f"\nper-fold fit summary under the fast estimator: {len(series)} generated series x "
          f"{len(specs)} candidates (ETS(A,A,A), ETS(A,Ad,N), 2 seasonal ARIMA on logs) x "
          f"{STORE_ORIGINS} origins, cadence 1 ({total} folds), interleaved, CPU; load "
          f"average {_load()}")
    print(f"  {'':46} {'statsmodels':>11} {'compiled':>9} {'ratio':>6}")
    rows = {"summary alone, ms per fold": {w: summary[w] / total * 1e3 for w in ways},
            **{f"  {family.upper()} folds": {w: summary_s[family, w] / count * 1e3
                                             for w in ways}
               for family, count in folds.items()},
            "results object in the fit, ms per fold": {
                "statsmodels": (fit_s["statsmodels"] - fit_s["compiled"]) / total * 1e3,
                "compiled": 0.0},
            "full minus lean, ms per fold": {w: extra[w] / total * 1e3 for w in ways},
            "full minus lean, CPU s per series": {w: extra[w] / len(series) for w in ways}}
    for label, values in rows.items():
        a, b = values["statsmodels"], values["compiled"]
        ratio = f"{a / b:6.1f}" if b > 0 else f"{'-':>6}"
        print(f"  {label:<46} {a:11.2f} {b:9.2f} {ratio}")
    print(f"  lean (fast fit and forecast): {fit_s['compiled'] / len(series):.2f} CPU s per "
          "series; target for full minus lean: at most 0.8 s per series")
    diagnostics_rows(series)


def _diagnostics_from_results(series: Series, candidate) -> dict:
    """The full-series report from statsmodels' results object (as the worker made it
    before the compiled report): the fast fit keeping that object, the report from it."""
    spec = candidate.spec
    z = spec.transform.forward(np.asarray(series.values, dtype=float))
    fit = spec.fit(z, series.season_length, estimator="fast")
    return fit_report(*spec.assessed(fit), z, series.season_length)


def diagnostics_rows(series: list[Series]) -> None:
    """CPU per full-series diagnostics call under the fast estimator, per candidate:
    statsmodels' path (fit with results object, report from it) against
    :func:`~backtest.diagnosis.full_series_diagnostics` (fit without it, report from the
    compiled likelihood), interleaved with the order alternating per call."""
    candidates = parse_candidates(STORE_CANDIDATES[4:])
    ways = {"statsmodels": _diagnostics_from_results,
            "compiled": lambda s, c: full_series_diagnostics(s, c, "fast")}
    seconds = {(c.spec.label(12), w): 0.0 for c in candidates for w in ways}
    calls = 0
    for i, s in enumerate(series * 3):
        for candidate in candidates:
            for way in list(ways)[i % 2:] + list(ways)[:i % 2]:
                gc.collect()
                started = time.process_time()
                _quiet(ways[way], s, candidate)
                seconds[candidate.spec.label(12), way] += time.process_time() - started
        calls += 1
    print(f"\nfull-series diagnostics under the fast estimator, CPU ms per call ({calls} calls "
          f"per candidate: {len(series)} series x 3, interleaved); load average {_load()}")
    print(f"  {'':46} {'statsmodels':>11} {'compiled':>9} {'ratio':>6}")
    totals = dict.fromkeys(ways, 0.0)
    for candidate in candidates:
        label = candidate.spec.label(12)
        per_call = {w: seconds[label, w] / calls for w in ways}
        for w in ways:
            totals[w] += per_call[w]
        a, b = per_call["statsmodels"] * 1e3, per_call["compiled"] * 1e3
        print(f"  {label:<46} {a:11.1f} {b:9.1f} {a / b:6.1f}")
    a, b = totals["statsmodels"], totals["compiled"]
    print(f"  {'the four, CPU s per series':<46} {a:11.3f} {b:9.3f} {a / b:6.1f}")


PARTS: dict[str, Callable[[argparse.Namespace], None]] = {"engine": engine_part,
                                                          "storage": storage_part,
                                                          "summary": summary_part}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--part", choices=sorted(PARTS), default="engine")
    parser.add_argument("--jobs", type=int, default=2, help="engine worker processes")
    parser.add_argument("--series", type=int,
                        help="generated series (default: 20 in part engine, 1,000 in "
                             "storage, 3 in summary)")
    parser.add_argument("--max-origins", type=int, default=24, help="panel origins per series")
    parser.add_argument("--assessment", default="full,lean",
                        help="plan assessments to time the engine with, comma-separated")
    parser.add_argument("--store-assessment", choices=["full", "lean"], default="full",
                        help="plan assessment of part storage")
    parser.add_argument("--refit", type=int, default=12, help="refit cadence of part storage")
    parser.add_argument("--estimator", choices=["reference", "fast"], default="reference",
                        help="plan estimator of part storage")
    args = parser.parse_args()
    print(f"{os.cpu_count()} CPUs; numpy {np.__version__}, statsmodels {sm_version}; "
          "one BLAS thread in every process")
    with threadpool_limits(limits=1):
        PARTS[args.part](args)


if __name__ == "__main__":
    main()
