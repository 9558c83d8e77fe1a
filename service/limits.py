"""Every limit on input, in one place, read by the HTTP schemas and routes and by the
command line alike, so the same input meets the same limit and the same words.

Two kinds of limit live here:

- bounds of the data model, fixed: the constants below (ids the store's integer columns
  hold, interval levels, season length, key and unit lengths, page sizes);
- limits an operator sets (``FOLDLINE_MAX_*``, values in :mod:`service.settings`): the
  ``check_*`` functions below compare input with them and raise
  :class:`~service.errors.LimitExceededError` (422 ``limit_exceeded`` over HTTP, one line
  and exit code 2 on the command line) with a message naming the setting.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from contextlib import contextmanager

from backtest.cost import RunCost
from backtest.errors import SeriesTooLongError, TooManySeriesError
from service.errors import FieldError, InvalidInputError, LimitExceededError
from service.settings import Settings

MAX_ID = 2**31 - 1
"""Largest id, version number, offset, seed or sequence number (the store's integer columns
hold no more)."""
MAX_SEED = MAX_ID
MIN_LEVEL, MAX_LEVEL = 1, 99
"""Interval levels are whole percentages in this range."""
MAX_SEASON_LENGTH = 1000
MAX_KEY_LENGTH = 200
"""Characters of a series key."""
MAX_UNIT_LENGTH = 32
"""Characters of a series' unit (``EUR``, ``kWh``, ``units sold``)."""
UNIT_PATTERN = r"^[^\x00-\x1f]*$"
"""A unit holds no control characters."""
MAX_PERIOD_LENGTH = 32
"""Characters of a period label."""
MAX_TAGS = 20
"""Most tags a series carries, and most tag filters a request gives."""
MAX_PAGE = 10_000
"""Rows per page of a table."""
MAX_RUNS_PAGE = 100
"""Runs per page of the run list."""
MAX_DOSSIER_ITEMS = 1000
"""Forecasts and audit events a dossier shows at most."""


def check_level_values(levels: Sequence[int], pointer: str) -> None:
    """Refuse interval levels outside whole percentages from :data:`MIN_LEVEL` to
    :data:`MAX_LEVEL`, or given twice (an issued forecast, from the CLI and the API alike)."""
    outside = [level for level in levels if not MIN_LEVEL <= level <= MAX_LEVEL]
    if outside:
        raise InvalidInputError(
            f"interval levels are whole percentages from {MIN_LEVEL} to {MAX_LEVEL}; got "
            f"{outside[0]}",
            errors=[FieldError("body", f"{pointer}/levels", "level out of range")])
    if len(set(levels)) != len(levels):
        raise InvalidInputError(
            "interval levels repeat a value",
            errors=[FieldError("body", f"{pointer}/levels", "repeated level")])


def check_horizon_and_levels(horizon: int, levels: int, settings: Settings,
                             pointer: str) -> None:
    """Refuse a horizon or a number of interval levels beyond the settings (a run's plan
    and an issued forecast alike)."""
    if horizon > settings.max_horizon:
        raise LimitExceededError(
            f"the horizon is {horizon} steps; at most {settings.max_horizon} are accepted "
            "(FOLDLINE_MAX_HORIZON)", errors=[FieldError("body", f"{pointer}/horizon",
                                                         "horizon too long")],
            estimate={"horizon": horizon}, limit={"horizon": settings.max_horizon})
    if levels > settings.max_levels:
        raise LimitExceededError(
            f"{levels} interval levels are asked for; at most {settings.max_levels} are "
            "accepted (FOLDLINE_MAX_LEVELS)",
            errors=[FieldError("body", f"{pointer}/levels", "too many levels")],
            estimate={"levels": levels}, limit={"levels": settings.max_levels})


def check_candidate_count(count: int, settings: Settings) -> None:
    """Refuse a run listing more candidates than ``FOLDLINE_MAX_CANDIDATES``."""
    if count > settings.max_candidates:
        raise LimitExceededError(
            f"the run lists {count} candidates; at most {settings.max_candidates} are "
            "accepted (FOLDLINE_MAX_CANDIDATES)",
            errors=[FieldError("body", "/candidates", "too many candidates")])


def check_cost(cost: RunCost, settings: Settings) -> None:
    """Refuse a run whose estimated cost exceeds a limit; the problem shows both."""
    limits = {"folds": settings.max_folds, "total_fits": settings.max_run_fits,
              "rows": settings.max_run_rows}
    estimate = cost.to_dict()
    over = [name for name, limit in limits.items() if estimate[name] > limit]
    if not over:
        return
    parts = {"folds": f"{cost.folds} folds (series x candidates x origins, the benchmark "
                      f"included; at most {settings.max_folds}, FOLDLINE_MAX_FOLDS)",
             "total_fits": f"{cost.total_fits} model fits (at most {settings.max_run_fits}, "
                           "FOLDLINE_MAX_RUN_FITS)",
             "rows": f"{cost.rows} result rows (at most {settings.max_run_rows}, "
                     "FOLDLINE_MAX_RUN_ROWS)"}
    raise LimitExceededError(
        "the run would compute " + " and ".join(parts[name] for name in over)
        + ": select fewer series or candidates, a shorter horizon or fewer levels, or set "
        "max_origins or a less frequent refit; nothing was queued",
        errors=[FieldError("body", "", f"too many {name.replace('total_', '')}")
                for name in over],
        estimate=estimate, limit=limits)


def check_observations(count: int, settings: Settings, pointer: str,
                       key: str | None = None) -> None:
    """Refuse a series of more observations (gaps filled) than
    ``FOLDLINE_MAX_OBSERVATIONS``."""
    limit = settings.max_observations
    if count > limit:
        which = f"series {key!r} has" if key else "the series has"
        raise LimitExceededError(
            f"{which} {count} observations; at most {limit} per series are accepted "
            "(FOLDLINE_MAX_OBSERVATIONS); nothing was stored",
            errors=[FieldError("body", pointer, f"more than {limit} observations")])


@contextmanager
def series_limits(settings: Settings, pointer: str) -> Iterator[None]:
    """Turn the engine's span and count checks (``max_length``, ``max_series``) into limit
    problems naming the setting."""
    try:
        yield
    except SeriesTooLongError as exc:
        check_observations(exc.length, settings, pointer, exc.key)
        raise
    except TooManySeriesError as exc:
        raise LimitExceededError(
            f"the file holds at least {exc.count} series; at most {exc.limit} are accepted "
            "at once (FOLDLINE_MAX_SERIES_PER_UPLOAD); nothing was stored",
            errors=[FieldError("body", "", "too many series")]) from None
