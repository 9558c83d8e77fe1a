"""The fast ARIMA estimator against the reference (statsmodels' own fit), side by side.

Parts (all by default; ``--part`` picks one, repeated several):

- ``compile``: the first-call cost in a fresh process with an empty numba cache
  (compiling) and again with the cache filled (loading): of the fast ARIMA likelihood, and
  of everything the worker warms at start (``backtest.warm_up``).
- ``fit``: one estimation of each model on log Series G (Box & Jenkins 1976, from
  ``tests/data``): the airline model ARIMA(0,1,1)×(0,1,1) and ARIMA(1,0,0)×(0,1,1), season 12,
  with drift (the engine bench's panel models), fast and reference interleaved, median CPU
  milliseconds per fit and their ratio, with the log-likelihood of each.
- ``series``: the worker's CPU per series of the lean profile: one generated monthly
  series (``engine_bench.panel``) with the engine bench's four model candidates
  (``STORE_CANDIDATES``: ETS(A,A,A), ETS(A,Ad,N), the airline model and
  ARIMA(1,0,0)×(0,1,1) with drift, both on logs, with the plan's benchmark), 36 origins,
  refit cadence 1, ``assessment: "lean"``, one process; the smallest of ``--repeats`` runs,
  in total and for the ARIMA and the ETS candidates alone.
- ``system``: CPU per fold of the forecasts at a fold's estimates (``forecast_stretch``
  from one origin, as every fold calls it at refit cadence 1) of both ``fit`` models on
  the series of ``series`` (120 monthly observations, on logs) at the fast estimates of
  its last 36 training windows: the state-space system filled in from the parameters
  (``backtest.models.arima_system``) against the former route, the system read back from
  a cached statsmodels model updated to the parameters
  (``tests/backtest/statsmodels_system.py``), interleaved, the smallest of ``--repeats``
  passes over the folds; with the largest difference of the two routes' forecasts.
- ``search``: the order search of one fold (``arima_search`` defaults) on log Series G at
  a few training-window ends, CPU seconds per fold under each estimator.
- ``search-validation``: both searches on the validation cases
  (``tests/backtest/search_validation.py``), every difference in the chosen order with
  both choices' AICc and log-likelihood.
- ``split``: one series, one estimating candidate, on one process against ``--jobs``
  workers (the task cut into chunks of origins), results compared.
- ``panel``: the engine at refit cadence 1 against the hand loop on the generated panel
  (20 series x 3 candidates), under each estimator, with the forecast agreement.
- ``engine``: ``run_backtest`` of the airline model on log Series G, re-estimating at
  every origin (``refit: 1``, ``assessment: "lean"``), under each estimator, one process.
- ``kernels``: whether a fold's numbers survive a change of processor. The panel's two
  ARIMA candidates (``--kernel-series`` series x ``--panel-origins`` origins) are fitted
  by the hand loop (statsmodels' default fit) and by the fast estimator in two processes
  that differ only in the BLAS kernel OpenBLAS runs (its choice for this processor, and
  ``OPENBLAS_CORETYPE=Sandybridge``, the kernel an older processor gets); on the folds
  where each estimator's two log-likelihoods agree to 1e-6, the largest relative
  difference of its forecasts and bounds between the kernels; the same for the fast
  estimator against the hand loop under each kernel (the panel's agreement target); each
  also on the interior folds alone (the fast estimate's largest inverse root at most
  ``arima_trial.MAX_INVERSE_ROOT``).
- ``corpus``: the validation corpus (``tests/backtest/fast_arima_corpus.py``, at least
  500 re-estimated folds over at least 20 series): per fold the fast and the reference
  estimate, their log-likelihoods by statsmodels (the exact likelihood of the differenced
  series, and the reference model's own with its approximate-diffuse start), the largest
  parameter difference and the largest relative difference of 12-step point forecasts.

    python bench/fast_arima_bench.py [--part fit [--part series ...]] [--repeats 5]
        [--origins 16] [--panel-series 20] [--panel-origins 24] [--validation ci|full]
        [--kernel-series 10]

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
from dataclasses import replace  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from threadpoolctl import threadpool_info, threadpool_limits  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "bench"))

from first_call import print_first_call_cost  # noqa: E402

import backtest.models.arima as arima_module  # noqa: E402
from backtest.candidates import parse_candidates  # noqa: E402
from backtest.engine import run_backtest  # noqa: E402
from backtest.models.arima import RENAMED_PARAMETERS, ArimaSpec, vector  # noqa: E402
from backtest.models.arima_search import ArimaSearchSpec  # noqa: E402
from backtest.models.arima_trial import MAX_INVERSE_ROOT  # noqa: E402
from backtest.models.fast_arima import fast_estimate, fast_loglike, warm_up  # noqa: E402
from backtest.models.fast_arima_trial import largest_root  # noqa: E402
from backtest.plan import parse_plan  # noqa: E402
from backtest.series import make_series  # noqa: E402
from tests.backtest.fast_arima_corpus import (  # noqa: E402
    corpus,
    exact_loglike,
    exact_model,
    origins,
)
from tests.backtest.search_validation import cases, compare  # noqa: E402
from tests.backtest.statsmodels_system import statsmodels_system  # noqa: E402

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
    """The fast ARIMA likelihood alone, then everything the worker warms at start
    (:mod:`backtest.warm_up`: both estimators, fold summaries, forecasts)."""
    print_first_call_cost("backtest.models.fast_arima")
    print_first_call_cost("backtest.warm_up")


def part_fit(repeats: int) -> None:
    y = np.log(_series_g())
    for name, spec in MODELS.items():
        fast_times, reference_times = [], []
        for _ in range(repeats):
            began = time.process_time()
            fast = fast_estimate(spec, y, 12)
            fast_times.append(time.process_time() - began)
            began = time.process_time()
            reference = _quiet(lambda spec=spec: spec.reference_fit(y, 12))
            reference_times.append(time.process_time() - began)
        fast_s, reference_s = np.median(fast_times), np.median(reference_times)
        gap = exact_loglike(spec, y, fast.params) - exact_loglike(spec, y, reference.params)
        print(f"  {name:32s} CPU per fit: fast {fast_s * 1e3:7.2f} ms ({fast.evaluations} "
              f"evaluations)  reference {reference_s * 1e3:7.1f} ms  ratio "
              f"{reference_s / fast_s:5.1f}x  loglik fast {fast.llf:.7f} "
              f"(fast - reference {gap:+.2e})")


def part_series(repeats: int) -> None:
    """The lean profile's worker CPU per series (see the module docstring)."""
    from engine_bench import LEVELS, STORE_CANDIDATES, STORE_ORIGINS, panel

    from backtest.models.fast_ets import warm_up as warm_up_ets

    warm_up_ets()
    series = panel(1)
    candidates = parse_candidates(STORE_CANDIDATES)
    models = [c for c in candidates if c.spec.family in ("arima", "ets")]
    plan = parse_plan({"horizon": 12, "max_origins": STORE_ORIGINS, "refit": 1,
                       "levels": list(LEVELS), "assessment": "lean", "estimator": "fast"})
    _quiet(lambda: run_backtest(series, models, plan))  # first calls out of the timing
    for label, chosen in (("4 model candidates", models),
                          ("ARIMA candidates", [c for c in models if c.spec.family == "arima"]),
                          ("ETS candidates", [c for c in models if c.spec.family == "ets"])):
        seconds = []
        for _ in range(repeats):
            began = time.process_time()
            _quiet(lambda chosen=chosen: run_backtest(series, chosen, plan))
            seconds.append(time.process_time() - began)
        print(f"  {label:18s} CPU per series {min(seconds):5.2f} s (median "
              f"{np.median(seconds):5.2f} s of {repeats}; {STORE_ORIGINS} origins, refit 1, "
              f"lean; load {os.getloadavg()[0]:.1f})")
    print("  target: the 4 model candidates at most 1.5 s per series")


def part_system(repeats: int) -> None:
    """CPU per fold of the forecasts at the fold's estimates under each system route (see
    the module docstring)."""
    from engine_bench import LEVELS, STORE_ORIGINS, panel

    y = np.log(panel(1)[0].values)
    ends = range(len(y) - STORE_ORIGINS + 1, len(y) + 1)
    direct = arima_module._system_at

    def one_pass(spec: ArimaSpec, folds: list[tuple[int, dict[str, float]]], route) -> float:
        arima_module._system_at = route
        try:
            began = time.process_time()
            for end, params in folds:
                spec.forecast_stretch(y[:end], 12, params, [end], 12, LEVELS, [0])
            return (time.process_time() - began) / len(folds)
        finally:
            arima_module._system_at = direct

    for name, spec in MODELS.items():
        folds = [(end, _quiet(lambda end=end, spec=spec: spec.fit(
            y[:end], 12, estimator="fast", keep_raw=False).params)) for end in ends]
        seconds: dict[str, list[float]] = {"direct": [], "statsmodels": []}
        for _ in range(repeats):
            seconds["statsmodels"].append(one_pass(spec, folds, statsmodels_system))
            seconds["direct"].append(one_pass(spec, folds, direct))
        gap = 0.0
        for end, params in folds:
            (ours,) = spec.forecast_stretch(y[:end], 12, params, [end], 12, LEVELS, [0])
            arima_module._system_at = statsmodels_system
            try:
                (former,) = spec.forecast_stretch(y[:end], 12, params, [end], 12, LEVELS, [0])
            finally:
                arima_module._system_at = direct
            gap = max(gap, float(np.max(np.abs(ours.mean - former.mean))),
                      *(float(np.max(np.abs(ours.upper[level] - former.upper[level])))
                        for level in LEVELS))
        before, after = min(seconds["statsmodels"]), min(seconds["direct"])
        print(f"  {name:40s} CPU per fold: statsmodels system {before * 1e3:6.3f} ms  "
              f"filled in {after * 1e3:6.3f} ms  ratio {before / after:4.1f}x  "
              f"({len(folds)} folds; largest forecast difference {gap:.1e} on the log scale)")


def part_search(folds: int) -> None:
    y = np.log(_series_g())
    spec = ArimaSearchSpec()
    ends = [int(e) for e in np.linspace(108, 144, folds)]
    per_fold = {}
    for estimator in ("fast", "reference"):
        began, began_cpu = time.perf_counter(), time.process_time()
        chosen = [_quiet(lambda end=end, estimator=estimator: spec.fit(
            y[:end], 12, estimator=estimator, keep_raw=False)) for end in ends]
        per_fold[estimator] = (time.process_time() - began_cpu) / len(ends)
        wall = (time.perf_counter() - began) / len(ends)
        labels = sorted({spec.chosen(f.params)[0].label(12) for f in chosen})
        print(f"  {estimator:9s} {per_fold[estimator]:6.2f} s CPU per fold ({wall:5.2f} s wall; "
              f"{len(ends)} folds ending {ends[0]}..{ends[-1]}; load "
              f"{os.getloadavg()[0]:.1f})  chosen: {'; '.join(labels)}")
    print(f"  ratio reference / fast: {per_fold['reference'] / per_fold['fast']:.1f}x "
          "(target: fast at most 0.3 s per fold)")


def part_search_validation(size: str) -> None:
    """Both searches on the validation cases: where they choose differently, the two
    choices' AICc and log-likelihood at their strict fast estimates."""
    rows = [compare(case) for case in cases(size)]
    same = [r for r in rows if r.same]
    fast_s = np.array([r.fast_seconds for r in rows])
    reference_s = np.array([r.reference_seconds for r in rows])
    print(f"  {len(rows)} cases: same order chosen in {len(same)}; CPU per search fast "
          f"median {np.median(fast_s):.2f} s (max {fast_s.max():.2f}), reference median "
          f"{np.median(reference_s):.2f} s (max {reference_s.max():.2f})")
    for r in rows:
        if not r.same:
            m = r.case.season_length
            print(f"  differs: {r.case.name}: fast {r.fast.label(m)} AICc "
                  f"{r.fast_criterion:.4f} loglik {r.fast_loglike:.4f}; reference "
                  f"{r.reference.label(m)} AICc {r.reference_criterion:.4f} loglik "
                  f"{r.reference_loglike:.4f}; fast - reference AICc {r.criterion_gap:+.3f}")
    worst = max(r.criterion_gap for r in rows)
    print(f"  largest AICc of the fast choice above the reference choice: {worst:+.2e} "
          "(0 where both choose the same)")


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


def _hand_fold(hand, z: np.ndarray) -> tuple[np.ndarray, float]:
    """The hand loop's fit at one origin: its forecast rows and its log-likelihood."""
    results = _quiet(lambda: hand.fit(z))
    return _quiet(lambda: hand.forecast(results, z)), float(results.llf)


def part_panel(n_series: int, max_origins: int, jobs: int) -> None:
    """Engine at refit cadence 1 against the hand loop on the generated panel (20 series x
    3 candidates): the hand loop fits statsmodels at every origin in this process; the
    engine runs under each estimator (``assessment: "lean"``, ``jobs`` workers), on all
    three candidates and on the two ARIMA candidates alone. Ratios are of
    CPU estimates for an idle machine (this process plus the busiest worker), as in
    ``engine_bench.py``; wall clock beside them."""
    from engine_bench import HAND, LEVELS, PANEL, Clock, _warm_pool, panel

    series = panel(n_series)
    candidates = parse_candidates(PANEL)
    ids = [c.id for c in candidates]
    n_obs = len(series[0])
    ends = list(range(48, n_obs - 12 + 1))[-max_origins:]
    hand_cpu = dict.fromkeys(ids, 0.0)
    hand, hand_llf = {}, {}
    began_wall = time.perf_counter()
    for s in series:
        values = np.asarray(s.values, float)
        for cid, model in zip(ids, HAND):
            z = np.log(values) if model.log else values
            began = time.process_time()
            folds = [_hand_fold(model, z[:end]) for end in ends]
            hand_cpu[cid] += time.process_time() - began
            hand[s.key, cid] = np.array([f[0] for f in folds])
            hand_llf[s.key, cid] = [f[1] for f in folds]
    hand_wall = time.perf_counter() - began_wall
    arima_ids = ids[:2]
    hand_all, hand_arima = sum(hand_cpu.values()), sum(hand_cpu[c] for c in arima_ids)
    print(f"  {len(series)} series x {len(ids)} candidates x {len(ends)} origins, H = 12, "
          f"refit 1; engine n_jobs={jobs}, lean; load {os.getloadavg()[0]:.1f}")
    print(f"  hand loop (one process): CPU {hand_all:.1f} s (ARIMA candidates "
          f"{hand_arima:.1f} s, ETS {hand_cpu[ids[2]]:.1f} s), wall {hand_wall:.1f} s")
    measured = {}
    for label, chosen, hand_s in (("all 3 candidates", candidates, hand_all),
                                  ("2 ARIMA candidates", candidates[:2], hand_arima)):
        for estimator in ("fast", "reference"):
            plan = parse_plan({"horizon": 12, "first_origin": {"train_size": 48},
                               "max_origins": max_origins, "refit": 1,
                               "levels": list(LEVELS), "assessment": "lean",
                               "estimator": estimator})
            _warm_pool(jobs)
            start = Clock.now()
            result = _quiet(lambda plan=plan, chosen=chosen: run_backtest(
                series, chosen, plan, n_jobs=jobs))
            wall, cpu = Clock.now().since(start)
            measured[label, estimator] = result
            print(f"  engine {label:18s} {estimator:9s}: CPU estimate {cpu:7.1f} s, wall "
                  f"{wall:7.1f} s; ratio to the hand loop {hand_s / cpu:5.1f}x (CPU), "
                  f"{hand_wall * hand_s / hand_all / wall:5.1f}x (wall); load "
                  f"{os.getloadavg()[0]:.1f}")
    _panel_agreement(series, candidates, measured["all 3 candidates", "fast"], ends, hand,
                     hand_llf)


def _panel_agreement(series, candidates, result, ends, hand, hand_llf) -> None:
    """The engine's folds (fast estimator) against the hand loop's statsmodels fits, per
    family: where both optima agree to 1e-6 in statsmodels' own log-likelihood, how far
    the forecasts and bounds differ; those folds re-fitted by statsmodels to a strict stop
    (``engine_bench.STRICT_STOP``), against the engine and against statsmodels' own default fit."""
    from engine_bench import HAND, engine_forecasts

    ids = [c.id for c in candidates]
    ours = engine_forecasts(result, ids)
    params = {(sr.series["key"], f.candidate_id): [] for sr in result.series for f in sr.folds}
    for sr in result.series:
        for f in sr.folds:
            params[sr.series["key"], f.candidate_id].append(f.params)

    def relative(a: np.ndarray, b: np.ndarray) -> float:
        return float(np.max(np.abs(a - b) / np.abs(b)))

    for family in ("arima", "ets"):
        rows = []
        for s in series:
            raw = np.asarray(s.values, float)
            for candidate, hand_model in zip(candidates, HAND):
                spec = candidate.spec
                if spec.family != family:
                    continue
                z = np.log(raw) if hand_model.log else raw
                for k, end in enumerate(ends):
                    model = spec.model(z[:end], 12)
                    mine = params[s.key, candidate.id][k]
                    estimate = (vector(model, mine) if family == "arima" else
                                np.array([mine[n] for n in model.param_names]))
                    llf = _quiet(lambda model=model, estimate=estimate: model.loglike(estimate))
                    row = {"gap": llf - hand_llf[s.key, candidate.id][k],
                           "apart": relative(ours[s.key, candidate.id][k],
                                             hand[s.key, candidate.id][k])}
                    # statsmodels' strict fit of the likelihood the engine maximises (ARIMA:
                    # the exact one, SARIMAX of the differenced series), from its own start
                    # values and from the engine's estimate
                    if family == "arima":
                        periodic = replace(spec, period=spec.season_period(12))
                        own = _exact_strict_fit(periodic, z[:end])
                        polished = _exact_strict_fit(periodic, z[:end], mine)
                        row["own_gap"] = (exact_loglike(periodic, z[:end], mine)
                                          - exact_loglike(periodic, z[:end], own))
                        row["polish_gain"] = (exact_loglike(periodic, z[:end], polished)
                                              - exact_loglike(periodic, z[:end], mine))
                        row["polish_apart"] = relative(ours[s.key, candidate.id][k],
                                                       hand_model.forecast(
                                                           None, z[:end],
                                                           vector(model, polished)))
                    else:
                        polished = _quiet(lambda h=hand_model, z=z[:end], e=estimate: h.fit(
                            z, strict=True, start=e))
                        row["polish_gain"] = float(polished.llf) - llf
                        row["polish_apart"] = relative(ours[s.key, candidate.id][k],
                                                       hand_model.forecast(polished, z[:end]))
                    if abs(row["gap"]) <= 1e-6:
                        strict = _quiet(lambda h=hand_model, z=z[:end]: h.fit(z, strict=True))
                        refitted = hand_model.forecast(strict, z[:end])
                        row.update(
                            strict_apart=relative(ours[s.key, candidate.id][k], refitted),
                            default_apart=relative(hand[s.key, candidate.id][k], refitted),
                            strict_gap=llf - float(strict.llf),
                            converged=bool(strict.mle_retvals.get("converged")))
                        if family == "arima":
                            theirs = {RENAMED_PARAMETERS.get(n, n): float(v) for n, v in
                                      zip(strict.model.param_names, strict.params)}
                            row["higher_exact"] = (fast_loglike(spec, z[:end], 12, mine)
                                                   >= fast_loglike(spec, z[:end], 12, theirs))
                    rows.append(row)
        table = pd.DataFrame(rows)
        agreeing = table[table["gap"].abs() <= 1e-6]
        print(f"  {family.upper()} folds (fast engine against the hand loop's statsmodels "
              f"fits): {len(table)}; statsmodels' own log-likelihood at the engine's "
              f"estimate at least the hand loop's - 1e-6 in {int((table['gap'] >= -1e-6).sum())}"
              f", within 1e-6 of it in {len(agreeing)}; forecasts and bounds apart by at "
              f"most {table['apart'].max():.1e} relative (all folds), "
              f"{agreeing['apart'].max():.1e} (agreeing folds, target 1e-6)")
        own = (f"; from its own start values it stops {-table['own_gap'].max():+.1e} to "
               f"{-table['own_gap'].min():+.1e} from the engine's" if family == "arima" else "")
        print(f"    statsmodels' strict fit of the likelihood the engine maximises"
              f"{' (the exact one: SARIMAX of the differenced series)' * (family == 'arima')}"
              f", started at the engine's estimate, gains {table['polish_gain'].min():+.1e} "
              f"to {table['polish_gain'].max():+.1e} and moves forecasts and bounds by at "
              f"most {table['polish_apart'].max():.1e} relative (median "
              f"{table['polish_apart'].median():.1e}){own}")
        if agreeing.empty:
            continue
        exact = (f", on the exact likelihood in {int(agreeing['higher_exact'].sum())}"
                 if family == "arima" else "")
        closest = agreeing[agreeing["strict_gap"].abs() <= 1e-9]
        print(f"    the {len(agreeing)} agreeing folds re-fitted by statsmodels to a strict "
              f"stop (pgtol 1e-10, factr 10; {int(agreeing['converged'].sum())} report "
              f"convergence): the engine within {agreeing['strict_apart'].max():.1e} relative "
              f"of them (median {agreeing['strict_apart'].median():.1e}); statsmodels' own "
              f"default fit within {agreeing['default_apart'].max():.1e} (median "
              f"{agreeing['default_apart'].median():.1e}); the engine's optimum the higher "
              f"on statsmodels' likelihood in {int((agreeing['strict_gap'] >= 0).sum())}"
              f"{exact}; engine minus strict re-fit log-likelihood from "
              f"{agreeing['strict_gap'].min():+.1e} to {agreeing['strict_gap'].max():+.1e}")
        if not closest.empty:
            print(f"    the {len(closest)} of them whose optima agree to 1e-9: the engine within "
                  f"{closest['strict_apart'].max():.1e} relative of the strict re-fit "
                  f"(median {closest['strict_apart'].median():.1e})")


def _exact_strict_fit(spec: ArimaSpec, z: np.ndarray, start: dict[str, float] | None = None
                      ) -> dict[str, float]:
    """statsmodels' own maximum of the exact likelihood of the differenced series
    (``exact_model``), run to ``engine_bench.STRICT_STOP`` from its start values or from
    ``start``, under the arima family's names."""
    from engine_bench import STRICT_STOP

    model = exact_model(spec, z)
    names = [spec.deterministic if i == 0 and model.k_exog else name
             for i, name in enumerate(model.param_names)]
    start_params = None if start is None else np.array([start[n] for n in names])
    fitted = _quiet(lambda: model.fit(start_params=start_params, disp=False, cov_type="none",
                                      **dict(STRICT_STOP)))
    return dict(zip(names, map(float, fitted.params)))


def part_split(jobs: int) -> None:
    """One series, one estimating candidate: the run on one process against ``jobs``
    workers, where the task's origins are cut into chunks (``backtest.task_chunks``); the
    results must be equal. CPU estimates for an idle machine as in ``engine_bench.py``."""
    from engine_bench import Clock, _warm_pool

    values = _series_g()
    series = make_series("g", "P1M", [(f"{1949 + i // 12}-{i % 12 + 1:02d}", v)
                                      for i, v in enumerate(values)])
    runs = (("order search (arima_search), fast", {"family": "arima_search",
                                                   "transform": "log"}, "fast", 12),
            ("airline model, reference", {"family": "arima", "order": [0, 1, 1],
                                          "seasonal": {"order": [0, 1, 1]},
                                          "transform": "log"}, "reference", 24))
    for label, body, estimator, max_origins in runs:
        candidates = parse_candidates([body])
        plan = parse_plan({"horizon": 12, "max_origins": max_origins, "refit": 1,
                           "assessment": "lean", "estimator": estimator})
        seconds, results = {}, {}
        for n_jobs in (1, jobs):
            _warm_pool(n_jobs)
            start = Clock.now()
            results[n_jobs] = _quiet(lambda plan=plan, n_jobs=n_jobs, chosen=candidates:
                                     run_backtest([series], chosen, plan, n_jobs=n_jobs))
            seconds[n_jobs] = Clock.now().since(start)
        equal = results[1].series == results[jobs].series
        print(f"  Series G, {label}, {max_origins} origins at refit 1: one process "
              f"{seconds[1][1]:.2f} s CPU ({seconds[1][0]:.2f} s wall), {jobs} workers "
              f"{seconds[jobs][1]:.2f} s CPU estimate ({seconds[jobs][0]:.2f} s wall): "
              f"{seconds[1][1] / seconds[jobs][1]:.2f}x (CPU), "
              f"{seconds[1][0] / seconds[jobs][0]:.2f}x (wall); results equal: {equal}; load "
              f"{os.getloadavg()[0]:.1f}")


#: The OpenBLAS kernel the second process of part ``kernels`` runs.
OTHER_KERNEL = "Sandybridge"


def record_kernel_folds(path: str, n_series: int, max_origins: int) -> None:
    """Part ``kernels``, one process: every ARIMA fold of the panel fitted by the hand loop
    and by the fast estimator, saved to ``path`` (log-likelihoods by statsmodels' model,
    forecast rows on the original scale) with the BLAS kernel that ran."""
    from engine_bench import HAND, PANEL, panel

    series = panel(n_series)
    specs = [c.spec for c in parse_candidates(PANEL)[:2]]
    ends = list(range(48, len(series[0]) - 12 + 1))[-max_origins:]
    hand_llf, hand_rows, fast_llf, fast_rows, fast_root = [], [], [], [], []
    for s in series:
        z_all = np.log(np.asarray(s.values, float))
        for spec, hand in zip(specs, HAND[:2]):
            for end in ends:
                z = z_all[:end]
                rows, llf = _hand_fold(hand, z)
                hand_rows.append(rows)
                hand_llf.append(llf)
                model = spec.model(z, 12)
                estimate = fast_estimate(spec, z, 12).params
                fast_root.append(largest_root(estimate))
                params = vector(model, estimate)
                fast_llf.append(float(_quiet(lambda model=model, params=params:
                                             model.loglike(params))))
                fast_rows.append(_quiet(lambda hand=hand, z=z, params=params:
                                        hand.forecast(None, z, params)))
    kernel = next((i.get("architecture") for i in threadpool_info()
                   if i.get("internal_api") == "openblas"), "unknown")
    np.savez(path, hand_llf=hand_llf, hand_rows=hand_rows, fast_llf=fast_llf,
             fast_rows=fast_rows, fast_root=fast_root, kernel=kernel)


def part_kernels(n_series: int, max_origins: int) -> None:
    """Both estimators' folds computed under two BLAS kernels, in two processes at once
    (:func:`record_kernel_folds`), compared."""
    with tempfile.TemporaryDirectory() as folder:
        paths = [str(Path(folder) / f"{i}.npz") for i in (0, 1)]
        runs = []
        for path, kernel in zip(paths, (None, OTHER_KERNEL)):
            env = {k: v for k, v in os.environ.items() if k != "OPENBLAS_CORETYPE"}
            if kernel is not None:
                env["OPENBLAS_CORETYPE"] = kernel
            runs.append(subprocess.Popen(
                [sys.executable, __file__, "--record-kernel-folds", path,
                 "--kernel-series", str(n_series), "--panel-origins", str(max_origins)],
                env=env))
        if any(run.wait() != 0 for run in runs):
            raise SystemExit("a kernel run failed")
        first, second = (dict(np.load(path)) for path in paths)
    print(f"  {len(first['hand_llf'])} ARIMA folds ({n_series} panel series x 2 candidates x "
          f"{max_origins} origins), kernels {first['kernel']} and {second['kernel']}")
    interior = np.maximum(first["fast_root"], second["fast_root"]) <= MAX_INVERSE_ROOT
    print(f"  {int(interior.sum())} folds interior: the fast estimate's largest inverse root "
          f"at most {MAX_INVERSE_ROOT} under both kernels (the others end on the ridge "
          "towards a unit root, where the likelihood has no interior maximum)")
    for name, label in (("hand", "statsmodels' default fit (the hand loop)"),
                        ("fast", "the fast estimator")):
        gap = np.abs(first[f"{name}_llf"] - second[f"{name}_llf"])
        apart = _rows_apart(first[f"{name}_rows"], second[f"{name}_rows"])
        same = int(np.sum(np.all(first[f"{name}_rows"] == second[f"{name}_rows"],
                                 axis=(1, 2))))
        print(f"  {label}, one kernel against the other: log-likelihoods apart by at most "
              f"{gap.max():.1e}; identical bit for bit in {same} folds")
        _print_agreement(gap, apart, interior)
    for run in (first, second):
        gap = np.abs(run["fast_llf"] - run["hand_llf"])
        print(f"  the fast estimator against the hand loop under {run['kernel']}: "
              f"log-likelihoods apart by at most {gap.max():.1e}")
        _print_agreement(gap, _rows_apart(run["fast_rows"], run["hand_rows"]), interior)


def _rows_apart(rows: np.ndarray, reference: np.ndarray) -> np.ndarray:
    """Per fold, the largest relative difference of forecasts and bounds."""
    result: np.ndarray = np.max(np.abs(rows - reference) / np.abs(reference), axis=(1, 2))
    return result


def _print_agreement(gap: np.ndarray, apart: np.ndarray, interior: np.ndarray) -> None:
    """Where two log-likelihoods agree to 1e-6, how far forecasts and bounds differ: on
    all such folds and on the interior ones."""
    for label, chosen in (("all", gap <= 1e-6), ("interior", (gap <= 1e-6) & interior)):
        values = apart[chosen]
        print(f"    {label:8s}: within 1e-6 in {int(chosen.sum())} folds; forecasts and "
              f"bounds apart by at most {values.max(initial=0.0):.1e} relative (median "
              f"{np.median(values) if values.size else 0.0:.1e}), over 1e-6 in "
              f"{int(np.sum(values > 1e-6))}")


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
    parser.add_argument("--part", action="append",
                        choices=("compile", "fit", "series", "system", "search",
                                 "search-validation", "engine", "corpus", "panel", "split",
                                 "kernels"),
                        help="repeat for several")
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--search-folds", type=int, default=6)
    parser.add_argument("--validation", choices=("ci", "full"), default="full",
                        help="search validation cases")
    parser.add_argument("--engine-origins", type=int, default=24)
    parser.add_argument("--origins", type=int, default=16, help="corpus origins per model")
    parser.add_argument("--panel-series", type=int, default=20)
    parser.add_argument("--panel-origins", type=int, default=24)
    parser.add_argument("--jobs", type=int, default=2, help="engine workers (part panel)")
    parser.add_argument("--kernel-series", type=int, default=10, help="panel series (part kernels)")
    parser.add_argument("--record-kernel-folds", metavar="PATH",
                        help="only record part kernels' folds to PATH (its child processes)")
    args = parser.parse_args()
    if args.record_kernel_folds:
        with threadpool_limits(limits=1):
            record_kernel_folds(args.record_kernel_folds, args.kernel_series,
                                args.panel_origins)
        return
    print(f"load: {os.getloadavg()[0]:.2f} {os.getloadavg()[1]:.2f} "
          f"{os.getloadavg()[2]:.2f} on {os.cpu_count()} cores; one BLAS thread")
    print(f"warm-up in this process: {warm_up():.2f} s")
    parts = {"compile": part_compile, "fit": lambda: part_fit(args.repeats),
             "series": lambda: part_series(args.repeats),
             "system": lambda: part_system(args.repeats),
             "search": lambda: part_search(args.search_folds),
             "search-validation": lambda: part_search_validation(args.validation),
             "engine": lambda: part_engine(args.engine_origins),
             "corpus": lambda: part_corpus(args.origins),
             "panel": lambda: part_panel(args.panel_series, args.panel_origins, args.jobs),
             "split": lambda: part_split(args.jobs),
             "kernels": lambda: part_kernels(args.kernel_series, args.panel_origins)}
    with threadpool_limits(limits=1):
        for name, run in parts.items():
            if args.part is None or name in args.part:
                print(f"[{name}]")
                run()


if __name__ == "__main__":
    main()
