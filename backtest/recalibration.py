"""Empirical intervals from a candidate's own past out-of-sample errors (nested rolling origin).

At origin i and horizon h, the bounds are the candidate's point forecast plus order
statistics of its errors (actual - point) at the same horizon h from earlier folds whose
horizon-h actual was already observed at origin i: fold j qualifies when
``(i - j) * step >= h``, so nothing after the origin is used. This is split-conformal
prediction (Vovk, Gammerman & Shafer 2005) applied per horizon to multi-step forecasts
(Stankeviciute, Alaa & van der Schaar 2021), and the empirical forecast intervals of
Williams & Goodman (1971).

For a central level with tail probability a = 1 - level/100 and n errors sorted
e_(1) <= ... <= e_(n), the lower bound adds e_(k) with k = floor((n + 1) a / 2) and the
upper bound e_(k') with k' = ceil((n + 1)(1 - a / 2)), the conformal ranks; they are
clipped to 1..n, so below n = 2/a - 1 (39 errors for 95 %, 9 for 80 %) the interval is
the sample's range and may cover less than nominal. With fewer than ``min_errors`` errors
at a horizon, the fold keeps the model's own bounds there. Each fold records how it was
done in its parameters: ``empirical.errors_h1`` (the errors available at h = 1) and
``empirical.horizons`` (the horizons, counted from 1, that got empirical bounds; later
horizons qualify no earlier than h = 1, so they form a prefix).

``errors: "scaled"`` divides each past error by its own fold's MASE scale (the training
window's mean absolute seasonal-naive change) and multiplies the chosen quantiles by the
current fold's scale, so that errors from a time when the series moved less (or more)
are brought to today's size. Use it where the series' level, and with it the size of its
changes, drifts; ``"raw"`` (default) uses the errors as they were.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any, Literal, cast

import numpy as np

from backtest.errors import CandidateError
from backtest.labels import intervals_qualifier
from backtest.models.base import choice
from backtest.results import FoldResult

ErrorKind = Literal["raw", "scaled"]
ERROR_KINDS: tuple[ErrorKind, ...] = ("raw", "scaled")


@dataclass(frozen=True)
class EmpiricalIntervals:
    """A candidate's request for empirical intervals."""

    min_errors: int = 20
    errors: ErrorKind = "raw"

    def canonical(self) -> dict[str, Any]:
        return {"kind": "empirical", "min_errors": self.min_errors, "errors": self.errors}

    def qualifier(self) -> str:
        """The candidate label's qualifier, e.g. ``emp`` or ``emp sc ≥12``."""
        return intervals_qualifier(self.errors == "scaled", self.min_errors,
                                   EmpiricalIntervals.min_errors)


def parse_intervals(body: object) -> EmpiricalIntervals | None:
    """Read a candidate's ``intervals`` field: ``"model"`` (``None``) or
    ``{"kind": "empirical", "min_errors": n, "errors": "raw" | "scaled"}``."""
    if body is None or body == "model" or body == {"kind": "model"}:
        return None
    if not isinstance(body, Mapping) or body.get("kind") != "empirical":
        raise CandidateError('intervals must be "model" or {"kind": "empirical", '
                             '"min_errors": n, "errors": "raw" | "scaled"}; '
                             f"got {body!r}")
    unknown = sorted(set(body) - {"kind", "min_errors", "errors"})
    if unknown:
        raise CandidateError(f"intervals: unknown field(s) {', '.join(unknown)}")
    least = body.get("min_errors", 20)
    if isinstance(least, bool) or not isinstance(least, int) or not 5 <= least <= 10_000:
        raise CandidateError(f"intervals min_errors must be an integer from 5 to 10000; "
                             f"got {least!r}")
    errors = choice(body.get("errors", "raw"), ERROR_KINDS, "intervals errors")
    return EmpiricalIntervals(least, cast(ErrorKind, errors))


def known_errors(folds: Sequence[FoldResult], position: int, horizon: int, step: int,
                 scaled: bool) -> np.ndarray:
    """Errors at ``horizon`` (1-based) of the completed folds before ``folds[position]``
    whose actual was observed at its origin; divided by their fold's scale if ``scaled``
    (folds without a positive scale are then left out). ``folds`` are in origin order."""
    here = folds[position].fold
    out = []
    for f in folds[:position]:
        if f.status != "ok" or (here - f.fold) * step < horizon:
            continue
        error = f.error(horizon)
        if scaled:
            if not f.scale:
                continue
            error /= f.scale
        out.append(error)
    return np.array(out, dtype=float)


def error_sample(folds: Sequence[FoldResult], position: int, horizon: int, step: int,
                 option: EmpiricalIntervals) -> np.ndarray | None:
    """The errors that set ``folds[position]``'s empirical bounds at ``horizon``, on the
    fold's own scale; ``None`` when there are fewer than ``option.min_errors`` of them
    (or, scaled, when the fold has no positive scale)."""
    scaled = option.errors == "scaled"
    factor = folds[position].scale if scaled else 1.0
    if not factor:
        return None
    errors = known_errors(folds, position, horizon, step, scaled)
    if len(errors) < option.min_errors:
        return None
    return errors * factor


def recalibrate(folds: Sequence[FoldResult], option: EmpiricalIntervals,
                levels: Sequence[int], step: int) -> tuple[FoldResult, ...]:
    """``folds`` (one candidate, origin order) with empirical bounds where there are
    enough past errors; see the module docstring."""
    ordered = sorted(folds, key=lambda f: f.fold)
    out = []
    for i, fold in enumerate(ordered):
        if fold.status != "ok":
            out.append(fold)
            continue
        samples = (error_sample(ordered, i, h, step, option)
                   for h in range(1, len(fold.actuals) + 1))
        lower, upper, done = empirical_bounds(fold.point_forecast, fold.lower, fold.upper,
                                              samples, levels)
        first = error_sample(ordered, i, 1, step, replace(option, min_errors=0))
        marks = _marks(0 if first is None else len(first), done)
        out.append(replace(fold, params={**(fold.params or {}), **marks},
                           lower=lower, upper=upper))
    return tuple(out)


def issued_bounds(point: Sequence[float], lower: Mapping[int, Sequence[float]],
                  upper: Mapping[int, Sequence[float]], folds: Sequence[FoldResult],
                  option: EmpiricalIntervals, scale: float, observed: Callable[[str], bool]
                  ) -> tuple[dict[int, tuple[float, ...]], dict[int, tuple[float, ...]],
                             dict[str, float]]:
    """Empirical bounds of an issued forecast from the candidate's backtest ``folds``:
    at horizon h, the errors at h of every completed fold whose target period is
    ``observed`` in the issuing version (scaled: by the fold's scale, times ``scale``,
    the version's). Returns lower, upper and the marks recorded with the forecast."""
    scaled = option.errors == "scaled"

    def errors(h: int) -> np.ndarray:
        out = []
        for f in folds:
            if f.status != "ok" or h > len(f.actuals) or not observed(f.periods[h - 1]):
                continue
            if scaled and not f.scale:
                continue
            error = f.error(h)
            out.append(error / f.scale if scaled and f.scale else error)
        return np.array(out, dtype=float) * (scale if scaled else 1.0)

    def sample(h: int) -> np.ndarray | None:
        found = errors(h)
        return found if len(found) >= option.min_errors else None

    new_lower, new_upper, done = empirical_bounds(
        point, lower, upper, (sample(h) for h in range(1, len(point) + 1)), list(lower))
    return new_lower, new_upper, _marks(len(errors(1)), done)


def empirical_bounds(point: Sequence[float], lower: Mapping[int, Sequence[float]],
                     upper: Mapping[int, Sequence[float]],
                     samples: Iterable[np.ndarray | None], levels: Sequence[int]
                     ) -> tuple[dict[int, tuple[float, ...]], dict[int, tuple[float, ...]],
                                int]:
    """Bounds from ``samples`` (one per horizon from h = 1; the first ``None`` stops, the
    model's bounds stay from there) and how many horizons got them."""
    new_lower = {lv: list(b) for lv, b in lower.items()}
    new_upper = {lv: list(b) for lv, b in upper.items()}
    done = 0
    for h, errors in enumerate(samples, start=1):
        if errors is None:
            break
        done = h
        for level in levels:
            low, high = conformal_offsets(errors, level)
            new_lower[level][h - 1] = point[h - 1] + low
            new_upper[level][h - 1] = point[h - 1] + high
    return ({lv: tuple(b) for lv, b in new_lower.items()},
            {lv: tuple(b) for lv, b in new_upper.items()}, done)


def _marks(errors_h1: int, horizons: int) -> dict[str, float]:
    return {"empirical.errors_h1": float(errors_h1), "empirical.horizons": float(horizons)}


def conformal_offsets(errors: np.ndarray, level: int) -> tuple[float, float]:
    """The conformal order statistics of ``errors`` for a central ``level`` % interval."""
    e = np.sort(errors)
    n, a = len(e), 1.0 - level / 100.0
    # the tolerance keeps exact ranks exact despite binary fractions (40 * 0.975)
    low = min(max(math.floor((n + 1) * a / 2.0 + 1e-9), 1), n)
    high = min(max(math.ceil((n + 1) * (1.0 - a / 2.0) - 1e-9), 1), n)
    return float(e[low - 1]), float(e[high - 1])
