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
    shape = arrays["actual"].shape
    full = {name: np.broadcast_to(a, shape) for name, a in arrays.items()}
    squared = np.where(full["observed"], (full["actual"] - full["point"])**2, np.nan)
    # Each horizon is a row of folds; pooled, one row of every fold and horizon. Row-wise
    # numpy reductions add a row's values in the order a one-row call does, so the
    # figures are those of scoring each horizon alone.
    by_horizon = _Rows({name: np.ascontiguousarray(a.T) for name, a in full.items()},
                       np.ascontiguousarray(squared.T), arrays["scale_sq"][:, 0], pooled=False)
    pooled = _Rows({name: a.reshape(1, -1) for name, a in full.items()}, squared,
                   arrays["scale_sq"][:, 0], pooled=True)
    out = []
    for rows, labels in ((by_horizon, columns[:-1]), (pooled, [None])):
        parts = [_point_scores(candidate_id, labels, rows),
                 _distribution_scores(candidate_id, labels, rows, levels, crps_note),
                 *(_level_scores(candidate_id, labels, rows, level) for level in levels)]
        for i in range(len(labels)):
            for part in parts:
                out.extend(part[i])
    return out


class _Rows:
    """A candidate's points as rows (a horizon's folds, or every point pooled): each
    array rows x points, ``kept`` the observed points, ``squared`` the squared errors and
    ``scale_sq`` the folds' RMSSE scales for the per-fold mean RMSSE."""

    def __init__(self, arrays: dict[str, np.ndarray], squared: np.ndarray,
                 scale_sq: np.ndarray, *, pooled: bool) -> None:
        self.a = arrays
        self.kept = arrays["observed"]
        self.size = self.kept.sum(axis=1)
        self.squared, self.scale_sq, self.pooled = squared, scale_sq, pooled
        left = self.kept.shape[1] - self.size
        self.unfilled = [f"{n} filled period(s) left out: not observed" if n else None
                         for n in left.tolist()]
        self.errors = arrays["actual"] - arrays["point"]


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


def _row_means(values: np.ndarray, kept: np.ndarray) -> list[float | None]:
    """Per row, the mean of its ``kept`` values as a float (``None`` if none is kept):
    whole rows in one call, partial rows one by one, each as ``np.mean`` of that row's
    kept values alone would give it."""
    out: list[float | None] = [None] * len(values)
    whole = kept.all(axis=1)
    if whole.any():
        for i, mean in zip(np.flatnonzero(whole).tolist(), values[whole].mean(axis=1).tolist()):
            out[i] = mean
    for i in np.flatnonzero(~whole & kept.any(axis=1)).tolist():
        out[i] = float(np.mean(values[i][kept[i]]))
    return out


def _scaled_means(values: np.ndarray, scale: np.ndarray, kept: np.ndarray,
                  undefined_when: str) -> list[tuple[float | None, int, str | None]]:
    """Per row, the mean of ``values / scale`` over the kept points with a positive scale;
    the note counts the points left out for an undefined scale (``undefined_when`` says
    when) and for a zero one."""
    finite = np.isfinite(scale)
    ok = kept & finite & (scale > 0) & np.isfinite(values)
    with np.errstate(divide="ignore", invalid="ignore"):
        means = _row_means(values / scale, ok)
    undefined = (kept & ~finite).sum(axis=1).tolist()
    zero = (kept & finite & (scale <= 0)).sum(axis=1).tolist()
    counts, sizes = ok.sum(axis=1).tolist(), kept.sum(axis=1).tolist()
    out: list[tuple[float | None, int, str | None]] = []
    for mean, count, size, bad, nil in zip(means, counts, sizes, undefined, zero):
        reasons = [text for n, text in (
            (bad, f"{bad} with an undefined training scale ({undefined_when})"),
            (nil, f"{nil} with a zero training scale")) if n]
        if not count:
            out.append((None, 0, "undefined: no point has a positive training scale: "
                        + "; ".join(reasons)))
            continue
        note = (f"{size - count} of {size} point(s) left out: " + "; ".join(reasons)
                if reasons else None)
        out.append((mean, count, note))
    return out


def _fold_mean_rmsse(rows: _Rows) -> list[tuple[float | None, int, str | None]]:
    """Per row, the mean over folds of each fold's RMSSE, sqrt(mean over its observed
    horizons of e^2 / scale), the per-series figure of the M5 competition averaged over
    origins; ``squared`` is NaN where a target period was not observed. At one horizon a
    fold's RMSSE is |e| / sqrt(scale)."""
    squared, scale_sq = rows.squared, rows.scale_sq
    if rows.pooled:
        seen = np.isfinite(squared).any(axis=1)
        ok = np.isfinite(scale_sq) & (scale_sq > 0) & seen
        per_fold = np.full(len(scale_sq), np.nan)
        if ok.any():
            per_fold[ok] = np.sqrt(np.nanmean(squared[ok] / scale_sq[ok, None], axis=1))
        seen, ok, per_fold = seen[None], ok[None], per_fold[None]
    else:
        seen = np.isfinite(squared)
        ok = np.isfinite(scale_sq) & (scale_sq > 0) & seen
        with np.errstate(divide="ignore", invalid="ignore"):
            per_fold = np.sqrt(squared / scale_sq)
    out: list[tuple[float | None, int, str | None]] = []
    means = _row_means(per_fold, ok)
    for mean, count, left_out, folds in zip(means, ok.sum(axis=1).tolist(),
                                            (~ok & seen).sum(axis=1).tolist(),
                                            seen.sum(axis=1).tolist()):
        if not count:
            out.append((None, 0, "undefined: no fold has a positive training scale (window "
                                 "shorter than 2, or a constant window)"))
            continue
        note = (f"{left_out} of {folds} fold(s) left out: undefined or zero training "
                "scale" if left_out else None)
        out.append((mean, count, note))
    return out


def _empty(cid: str, h: int | None, names: Sequence[str], level: int | None,
           unfilled: str | None) -> list[Score]:
    return [Score(cid, h, name, level, None, 0, _joined(unfilled, "undefined: no observed "
                                                                  "actual"))
            for name in names]


def _point_scores(cid: str, labels: Sequence[int | None], rows: _Rows) -> list[list[Score]]:
    a, kept, errors = rows.a, rows.kept, rows.errors
    mase = _scaled_means(np.abs(errors), a["scale"], kept, _SHORT_SEASONAL)
    msse = _scaled_means(errors**2, a["scale_sq"], kept, "window shorter than 2")
    fold_rmsse = _fold_mean_rmsse(rows)
    terms = metrics.smape_terms(a["actual"], a["point"])
    defined = kept & np.isfinite(terms)
    smape = _row_means(terms, defined)
    smape_counts, undefined = defined.sum(axis=1).tolist(), (kept & ~defined).sum(axis=1)
    mae = _row_means(np.abs(errors), kept)
    rmse = [None if ms is None else float(np.sqrt(ms)) for ms in _row_means(errors**2, kept)]
    me = _row_means(errors, kept)
    out = []
    for i, (h, n, unfilled) in enumerate(zip(labels, rows.size.tolist(), rows.unfilled)):
        if not n:
            out.append(_empty(cid, h, POINT_METRICS, None, unfilled))
            continue
        smape_note = None
        if undefined[i]:
            smape_note = (f"{int(undefined[i])} point(s) with actual = forecast = 0 left out"
                          if smape_counts[i] else "undefined: every actual and forecast is 0")
        msse_value, n_rmsse, note_rmsse = msse[i]
        out.append([
            Score(cid, h, "mase", None, mase[i][0], mase[i][1], _joined(unfilled, mase[i][2])),
            Score(cid, h, "rmsse", None, None if msse_value is None
                  else float(np.sqrt(msse_value)), n_rmsse, _joined(unfilled, note_rmsse)),
            Score(cid, h, "rmsse_fold_mean", None, fold_rmsse[i][0], fold_rmsse[i][1],
                  _joined(unfilled, fold_rmsse[i][2])),
            Score(cid, h, "smape", None, smape[i], smape_counts[i],
                  _joined(unfilled, smape_note)),
            Score(cid, h, "mae", None, mae[i], n, unfilled),
            Score(cid, h, "rmse", None, rmse[i], n, unfilled),
            Score(cid, h, "me", None, me[i], n, unfilled),
        ])
    return out


def _distribution_scores(cid: str, labels: Sequence[int | None], rows: _Rows,
                         levels: Sequence[int], crps_note: str | None) -> list[list[Score]]:
    a, kept = rows.a, rows.kept
    crps = a["crps"]
    defined = kept & np.isfinite(crps)
    crps_means, crps_counts = _row_means(crps, defined), defined.sum(axis=1).tolist()
    undefined = (kept & ~defined).sum(axis=1).tolist()
    if levels:
        pinball = np.mean([a[f"pinball{level}"] for level in levels], axis=0)
        finite = (~kept | np.isfinite(pinball)).all(axis=1).tolist()
        pinball_means = _row_means(pinball, kept)
        scaled = _scaled_means(pinball, a["scale"], kept, _SHORT_SEASONAL)
    out = []
    for i, (h, n, unfilled) in enumerate(zip(labels, rows.size.tolist(), rows.unfilled)):
        if not n:
            out.append(_empty(cid, h, DISTRIBUTION_METRICS, None, unfilled))
            continue
        note = None
        if undefined[i]:
            note = (f"{undefined[i]} point(s) left out: {crps_note}" if crps_counts[i]
                    else crps_note)
        if not levels:
            out.append([Score(cid, h, "crps", None, None, 0, _joined(unfilled, NO_LEVELS)),
                        *(Score(cid, h, name, None, None, 0, _joined(unfilled, NO_LEVELS))
                          for name in ("pinball", "scaled_pinball"))])
            continue
        pinball_note = None if finite[i] else "undefined: an interval bound is infinite"
        scaled_value, n_scaled, scaled_note = scaled[i]
        if not finite[i]:
            scaled_value, scaled_note = None, pinball_note
        out.append([
            Score(cid, h, "crps", None, crps_means[i], crps_counts[i], _joined(unfilled, note)),
            Score(cid, h, "pinball", None, pinball_means[i] if finite[i] else None, n,
                  _joined(unfilled, pinball_note)),
            Score(cid, h, "scaled_pinball", None, scaled_value, n_scaled,
                  _joined(unfilled, scaled_note)),
        ])
    return out


def _level_scores(cid: str, labels: Sequence[int | None], rows: _Rows,
                  level: int) -> list[list[Score]]:
    a, kept = rows.a, rows.kept
    actual, lower, upper = a["actual"], a[f"lower{level}"], a[f"upper{level}"]
    coverage = _row_means(metrics.hits(lower, upper, actual), kept)
    scores = metrics.interval_score(lower, upper, actual, level)
    finite = (~kept | np.isfinite(scores)).all(axis=1).tolist()
    winkler = _row_means(scores, kept)
    msis = _scaled_means(scores, a["scale"], kept, _SHORT_SEASONAL)
    pinball = _row_means(a[f"pinball{level}"], kept)
    out = []
    for i, (h, n, unfilled) in enumerate(zip(labels, rows.size.tolist(), rows.unfilled)):
        if not n:
            out.append(_empty(cid, h, LEVEL_METRICS, level, unfilled))
            continue
        winkler_note = None if finite[i] else "undefined: an interval bound is infinite"
        msis_value, n_msis, msis_note = msis[i]
        if not finite[i]:
            msis_value, msis_note = None, winkler_note
        out.append([
            Score(cid, h, "coverage", level, coverage[i], n, unfilled),
            Score(cid, h, "winkler", level, winkler[i] if finite[i] else None, n,
                  _joined(unfilled, winkler_note)),
            Score(cid, h, "msis", level, msis_value, n_msis, _joined(unfilled, msis_note)),
            Score(cid, h, "pinball", level, pinball[i] if finite[i] else None, n,
                  _joined(unfilled, winkler_note)),
        ])
    return out
