"""Scores of one candidate over its completed folds, per horizon and pooled.

Per horizon h the measures average over folds; "pooled" (horizon ``None``) averages over
every fold and horizon. Scaled measures divide each fold's errors by that fold's own
training-window scale: MASE by the mean absolute seasonal-naive error, RMSSE by the mean
squared one-step naive error, MSIS by the MASE scale. Two RMSSEs, both after Hyndman &
Koehler (2006), who define scaled errors:

- ``rmsse``, pooled: ``sqrt(mean over folds and horizons of e^2 / scale_sq)``, one root
  over all points, so a fold with large scaled errors weighs in squared;
- ``rmsse_fold_mean``: the mean over folds of each fold's RMSSE
  ``sqrt(mean over its horizons of e^2 / scale_sq)``, the per-series RMSSE of the M5
  competition (Makridakis, Spiliotis & Assimakopoulos 2022), which has one origin per
  series, averaged over the origins. At one horizon it is the mean of |e| / sqrt(scale_sq).

Points whose measure is undefined are left out and the score's ``note`` says how many of
how many, and why: an undefined training scale (a window shorter than m + 1 has no
seasonal difference, shorter than 2 no one-step difference), a zero one (a constant
window), sMAPE's 0/0. A score with no defined point is ``None``.
Periods a fill policy made up (never observed) are not actuals: they are left out of every
score, and the note counts them.

Distribution scores (level ``None``): ``crps`` in the series' units, from the candidate's
predictive distribution (:mod:`backtest.predictive`); ``pinball``, the mean pinball loss
over every quantile the plan's interval bounds give (two per level), also per level; and
``scaled_pinball``, that mean divided by each fold's MASE scale. The M5 competition's
scaled pinball loss divided by the one-step naive scale instead (Makridakis et al. 2022);
the two agree for non-seasonal series.
"""

from __future__ import annotations

from collections.abc import Collection, Sequence

import numpy as np

from backtest import metrics
from backtest.predictive import GAUSSIAN, Predictive, crps_by_fold, pinball_by_level
from backtest.results import FoldResult, Score
from backtest.score_registry import DISTRIBUTION_METRICS, LEVEL_METRICS, POINT_METRICS

_SHORT_SEASONAL = "training window shorter than m + 1: no seasonal difference"
NO_LEVELS = "undefined: the plan has no interval level to give the predictive spread"


def score_candidate(candidate_id: str, folds: Sequence[FoldResult], horizon: int,
                    levels: Sequence[int], filled: Collection[str] = (),
                    predictive: Predictive = GAUSSIAN) -> list[Score]:
    """All scores of one candidate; ``folds`` may include failed ones (they are skipped).

    Target periods in ``filled`` (made by a fill policy, never observed) are not actuals:
    they are left out of every score, which counts them in its ``note``. ``predictive``
    says what distribution the folds' bounds come from (default: Gaussian on the original
    scale)."""
    done = [f for f in folds if f.status == "ok"]
    columns: list[int | None] = [*range(1, horizon + 1), None]
    if not done:
        return [Score(candidate_id, h, name, level, None, 0, "no fold completed")
                for h in columns for name, level in _names(levels)]
    arrays = _stack(done, levels, frozenset(filled))
    if levels:
        arrays["crps"], crps_note = crps_by_fold(done, predictive, levels)
    else:
        arrays["crps"] = np.full(arrays["actual"].shape, np.nan)
        crps_note = NO_LEVELS
    for level, losses in pinball_by_level(done, levels).items():
        arrays[f"pinball{level}"] = losses
    out = []
    for h in columns:
        cols = slice(None) if h is None else slice(h - 1, h)
        observed = arrays["observed"][:, cols]
        points = {name: np.broadcast_to(a, arrays["actual"].shape)[:, cols][observed]
                  for name, a in arrays.items() if name != "observed"}
        left = int(observed.size - observed.sum())
        unfilled = f"{left} filled period(s) left out: not observed" if left else None
        squared = np.where(observed, (arrays["actual"][:, cols] - arrays["point"][:, cols])**2,
                           np.nan)
        out.extend(_point_scores(candidate_id, h, points, unfilled, squared,
                                 arrays["scale_sq"][:, 0]))
        out.extend(_distribution_scores(candidate_id, h, points, levels, crps_note, unfilled))
        for level in levels:
            out.extend(_level_scores(candidate_id, h, points, level, unfilled))
    return out


def _names(levels: Sequence[int]) -> list[tuple[str, int | None]]:
    return ([(m, None) for m in (*POINT_METRICS, *DISTRIBUTION_METRICS)]
            + [(m, lv) for lv in levels for m in LEVEL_METRICS])


def _stack(folds: Sequence[FoldResult], levels: Sequence[int],
           filled: frozenset[str]) -> dict[str, np.ndarray]:
    arrays = {
        "actual": np.array([f.actuals for f in folds], dtype=float),
        "point": np.array([f.point for f in folds], dtype=float),
        "scale": np.array([np.nan if f.scale is None else f.scale for f in folds])[:, None],
        "scale_sq": np.array([np.nan if f.scale_sq is None else f.scale_sq
                              for f in folds])[:, None],
        "observed": np.array([[p not in filled for p in f.periods] for f in folds], dtype=bool),
    }
    for level in levels:
        arrays[f"lower{level}"] = np.array([f.lower[level] for f in folds], dtype=float)
        arrays[f"upper{level}"] = np.array([f.upper[level] for f in folds], dtype=float)
    return arrays


def _joined(*notes: str | None) -> str | None:
    return "; ".join(n for n in notes if n) or None


def _scaled_mean(values: np.ndarray, scale: np.ndarray, undefined_when: str
                 ) -> tuple[float | None, int, str | None]:
    """Mean of ``values / scale`` over the points with a positive scale; the note counts the
    points left out for an undefined scale (``undefined_when`` says when) and for a zero
    one."""
    scale = np.broadcast_to(scale, values.shape)
    ok = np.isfinite(scale) & (scale > 0) & np.isfinite(values)
    undefined = int((~np.isfinite(scale)).sum())
    zero = int((np.isfinite(scale) & (scale <= 0)).sum())
    reasons = [text for count, text in (
        (undefined, f"{undefined} with an undefined training scale ({undefined_when})"),
        (zero, f"{zero} with a zero training scale")) if count]
    if not ok.any():
        return None, 0, "undefined: no point has a positive training scale: " + "; ".join(
            reasons)
    note = (f"{int(values.size - ok.sum())} of {values.size} point(s) left out: "
            + "; ".join(reasons)) if reasons else None
    return float(np.mean(values[ok] / scale[ok])), int(ok.sum()), note


def _fold_mean_rmsse(squared: np.ndarray, scale_sq: np.ndarray
                     ) -> tuple[float | None, int, str | None]:
    """Mean over folds of each fold's RMSSE, sqrt(mean over its observed horizons of
    e^2 / scale), the per-series figure of the M5 competition averaged over origins;
    ``squared`` is NaN where a target period was not observed."""
    seen = np.isfinite(squared).any(axis=1)
    ok = np.isfinite(scale_sq) & (scale_sq > 0) & seen
    if not ok.any():
        return None, 0, "undefined: no fold has a positive training scale (window shorter " \
                        "than 2, or a constant window)"
    per_fold = np.sqrt(np.nanmean(squared[ok] / scale_sq[ok, None], axis=1))
    left_out = int((~ok & seen).sum())
    note = (f"{left_out} of {int(seen.sum())} fold(s) left out: undefined or zero training "
            "scale" if left_out else None)
    return float(np.mean(per_fold)), int(ok.sum()), note


def _point_scores(cid: str, h: int | None, a: dict[str, np.ndarray], unfilled: str | None,
                  fold_squared: np.ndarray, fold_scale_sq: np.ndarray) -> list[Score]:
    actual, point = a["actual"], a["point"]
    errors = actual - point
    n = errors.size
    if not n:
        return [Score(cid, h, name, None, None, 0, _joined(unfilled, "undefined: no observed "
                                                                    "actual"))
                for name in POINT_METRICS]
    mase, n_mase, note_mase = _scaled_mean(np.abs(errors), a["scale"], _SHORT_SEASONAL)
    msse, n_rmsse, note_rmsse = _scaled_mean(errors**2, a["scale_sq"], "window shorter than 2")
    fold_rmsse, n_folds, note_folds = _fold_mean_rmsse(fold_squared, fold_scale_sq)
    terms = metrics.smape_terms(actual, point)
    defined = np.isfinite(terms)
    smape = float(np.mean(terms[defined])) if defined.any() else None
    smape_note = None
    if not defined.all():
        smape_note = (f"{int((~defined).sum())} point(s) with actual = forecast = 0 left out"
                      if defined.any() else "undefined: every actual and forecast is 0")
    return [
        Score(cid, h, "mase", None, mase, n_mase, _joined(unfilled, note_mase)),
        Score(cid, h, "rmsse", None, None if msse is None else float(np.sqrt(msse)), n_rmsse,
              _joined(unfilled, note_rmsse)),
        Score(cid, h, "rmsse_fold_mean", None, fold_rmsse, n_folds,
              _joined(unfilled, note_folds)),
        Score(cid, h, "smape", None, smape, int(defined.sum()), _joined(unfilled, smape_note)),
        Score(cid, h, "mae", None, float(np.mean(np.abs(errors))), n, unfilled),
        Score(cid, h, "rmse", None, float(np.sqrt(np.mean(errors**2))), n, unfilled),
        Score(cid, h, "me", None, float(np.mean(errors)), n, unfilled),
    ]


def _distribution_scores(cid: str, h: int | None, a: dict[str, np.ndarray],
                         levels: Sequence[int], crps_note: str | None,
                         unfilled: str | None) -> list[Score]:
    crps = a["crps"]
    if not crps.size:
        return [Score(cid, h, name, None, None, 0, _joined(unfilled, "undefined: no observed "
                                                                    "actual"))
                for name in DISTRIBUTION_METRICS]
    defined = np.isfinite(crps)
    note = None
    if not defined.all():
        note = (f"{int((~defined).sum())} point(s) left out: {crps_note}" if defined.any()
                else crps_note)
    if not levels:
        return [Score(cid, h, "crps", None, None, 0, _joined(unfilled, NO_LEVELS)),
                *(Score(cid, h, name, None, None, 0, _joined(unfilled, NO_LEVELS))
                  for name in ("pinball", "scaled_pinball"))]
    pinball = np.mean([a[f"pinball{level}"] for level in levels], axis=0)
    finite = np.isfinite(pinball)
    pinball_note = None if finite.all() else "undefined: an interval bound is infinite"
    scaled, n_scaled, scaled_note = _scaled_mean(pinball, a["scale"], _SHORT_SEASONAL)
    if not finite.all():
        scaled, scaled_note = None, pinball_note
    return [
        Score(cid, h, "crps", None, float(np.mean(crps[defined])) if defined.any() else None,
              int(defined.sum()), _joined(unfilled, note)),
        Score(cid, h, "pinball", None, float(np.mean(pinball)) if finite.all() else None,
              pinball.size, _joined(unfilled, pinball_note)),
        Score(cid, h, "scaled_pinball", None, scaled, n_scaled, _joined(unfilled, scaled_note)),
    ]


def _level_scores(cid: str, h: int | None, a: dict[str, np.ndarray], level: int,
                  unfilled: str | None) -> list[Score]:
    actual = a["actual"]
    lower, upper = a[f"lower{level}"], a[f"upper{level}"]
    if not actual.size:
        return [Score(cid, h, name, level, None, 0, _joined(unfilled, "undefined: no observed "
                                                                     "actual"))
                for name in LEVEL_METRICS]
    coverage = float(np.mean(metrics.hits(lower, upper, actual)))
    scores = metrics.interval_score(lower, upper, actual, level)
    finite = np.isfinite(scores)
    winkler = float(np.mean(scores)) if finite.all() else None
    winkler_note = None if finite.all() else "undefined: an interval bound is infinite"
    msis, n_msis, msis_note = _scaled_mean(scores, a["scale"], _SHORT_SEASONAL)
    if not finite.all():
        msis, msis_note = None, winkler_note
    pinball = a[f"pinball{level}"]
    return [
        Score(cid, h, "coverage", level, coverage, actual.size, unfilled),
        Score(cid, h, "winkler", level, winkler, actual.size, _joined(unfilled, winkler_note)),
        Score(cid, h, "msis", level, msis, n_msis, _joined(unfilled, msis_note)),
        Score(cid, h, "pinball", level, float(np.mean(pinball)) if finite.all() else None,
              pinball.size, _joined(unfilled, winkler_note)),
    ]
