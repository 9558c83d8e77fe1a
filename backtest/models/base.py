"""What every model family provides: a frozen spec that can estimate and forecast.

A family is one module in this package holding a frozen dataclass that subclasses
:class:`ModelSpec`, plus its ``parse`` function registered in ``backtest.models``.
The engine only ever calls the methods below, always on data up to the forecast origin
(already transformed by the spec's transform).
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar, Literal

import numpy as np
from scipy import special

from backtest.errors import CandidateError
from backtest.transforms import Transform

Params = dict[str, float]
#: How a ``fast_estimable`` family estimates: its compiled estimator or the library's own.
Estimator = Literal["fast", "reference"]
ESTIMATORS: tuple[Estimator, ...] = ("fast", "reference")


@dataclass(frozen=True, eq=False)
class Fit:
    """Estimated parameters, plus the library's fitted-results object where there is one.

    ``raw`` (e.g. statsmodels' ARIMA results) lets the assessment code compute standard
    errors and residual tests; it stays inside the worker process and is never returned.
    ``converged`` is the optimiser's verdict (``None``: no iterative optimiser, or not
    reported); ``rescaled_by`` the factor the data were multiplied by before estimation
    (the parameters are on the original scale).
    """

    params: Params
    raw: Any = None
    converged: bool | None = None
    rescaled_by: float = 1.0


@dataclass(frozen=True, eq=False)
class Forecast:
    """Point forecasts for h = 1..H and central interval bounds per level (in %); a model
    whose bounds come from simulated paths also gives the paths (``sample``, shape
    ``(H, repetitions)``), from which the fold's CRPS is computed."""

    mean: np.ndarray
    lower: dict[int, np.ndarray]
    upper: dict[int, np.ndarray]
    sample: np.ndarray | None = None


class ModelSpec(ABC):
    """A candidate model definition; subclasses are frozen dataclasses."""

    family: ClassVar[str]
    #: Closed-form families are re-estimated at every origin whatever the refit cadence.
    closed_form: ClassVar[bool] = False
    #: Families whose ``fit`` takes ``start_params`` for its optimiser (a plan's warm start).
    warm_startable: ClassVar[bool] = False
    #: Families whose ``fit_forecast`` takes ``keep_raw=False``: the caller needs the
    #: estimates and the forecast only (a lean assessment), so the family may skip building
    #: the library's results object (``Fit.raw`` is then ``None``).
    raw_optional: ClassVar[bool] = False
    #: Families whose ``fit`` and ``fit_forecast`` take ``estimator`` (a plan's estimator).
    fast_estimable: ClassVar[bool] = False
    transform: Transform

    def fits_per_estimate(self) -> int:
        """Most model fits one estimation may take (an order search fits several)."""
        return 1

    @abstractmethod
    def body(self) -> dict[str, Any]:
        """Canonical JSON body of the spec, every default filled in (without ``family``)."""

    @abstractmethod
    def label(self, season_length: int) -> str:
        """Short human-readable name, e.g. ``ARIMA(0,1,1)×(0,1,1), season 12, log``
        (notation: :mod:`backtest.labels`)."""

    @abstractmethod
    def min_train(self, season_length: int) -> int:
        """Fewest training observations this spec can be estimated on."""

    @abstractmethod
    def fit(self, y: np.ndarray, season_length: int, *,
            start_params: Params | None = None) -> Fit:
        """Estimate parameters on the training window ``y``; ``start_params``, where the
        family is ``warm_startable``, are the optimiser's start values (default: its own).

        The fit options are keyword-only and each family takes those its class flags
        declare: ``start_params`` (``warm_startable``), ``estimator`` (``fast_estimable``),
        ``keep_raw`` (``raw_optional``, on ``fit_forecast``); callers pass no others, so
        a family's override narrows this signature (``type: ignore[override]`` there)."""

    @abstractmethod
    def forecast(self, y: np.ndarray, season_length: int, params: Params, horizon: int,
                 levels: tuple[int, ...], seed: int) -> Forecast:
        """Forecast h = 1..horizon from the end of ``y`` with the given parameters."""

    def fit_forecast(self, y: np.ndarray, season_length: int, horizon: int,
                     levels: tuple[int, ...], seed: int, **options: Any
                     ) -> tuple[Fit, Forecast]:
        """Estimate on ``y`` and forecast from its end; families may do both in one pass.
        ``options`` (``start_params``, ``estimator``, ``keep_raw``, as the family takes
        them) are passed on to ``fit``."""
        fit = self.fit(y, season_length, **options)
        return fit, self.forecast(y, season_length, fit.params, horizon, levels, seed)

    def forecast_stretch(self, y: np.ndarray, season_length: int, params: Params,
                         ends: Sequence[int], horizon: int, levels: tuple[int, ...],
                         seeds: Sequence[int]) -> list[Forecast]:
        """Forecasts from several origins with the same parameters.

        ``ends[i]`` is the origin as a length of ``y``: the i-th forecast must equal
        ``forecast(y[:ends[i]], ...)``. Families override this with a one-pass method.
        """
        return [self.forecast(y[:end], season_length, params, horizon, levels, seed)
                for end, seed in zip(ends, seeds)]

    def fit_forecast_windows(self, y: np.ndarray, season_length: int,
                             windows: Sequence[tuple[int, int]], horizon: int,
                             levels: tuple[int, ...], seeds: Sequence[int]
                             ) -> list[tuple[Fit, Forecast]]:
        """``fit_forecast`` on each window ``y[start:end]``; closed-form families override
        this with a vectorised method (the engine calls it for them)."""
        return [self.fit_forecast(y[start:end], season_length, horizon, levels, seed)
                for (start, end), seed in zip(windows, seeds)]

    def assessed(self, fit: Fit) -> tuple[ModelSpec, Fit]:
        """The spec and fit that diagnostics should examine (a search names its choice)."""
        return self, fit

    def check(self, season_length: int) -> None:  # noqa: B027 - optional hook
        """Raise :class:`CandidateError` if the spec is impossible for this season length."""

    @property
    def needs_positive(self) -> bool:
        """Whether the data must be strictly positive."""
        return self.transform.needs_positive

    @property
    def gaussian(self) -> bool:
        """Whether the forecast is Gaussian on the transformed scale: the point forecast its
        mean and the bounds mean +/- z * sd (probabilistic scores rely on it). Families
        whose intervals are simulated say no."""
        return True


def back_transform(transform: Transform, forecast: Forecast) -> Forecast:
    """``forecast`` made on the ``transform``-ed scale, back on the original scale.

    Raises :class:`FloatingPointError` if the point forecast is not finite or a bound is NaN.
    """
    mean = transform.inverse(forecast.mean)
    lower = {lv: transform.inverse(b) for lv, b in forecast.lower.items()}
    upper = {lv: transform.inverse(b) for lv, b in forecast.upper.items()}
    sample = None if forecast.sample is None else transform.inverse(forecast.sample)
    if not np.all(np.isfinite(mean)):
        raise FloatingPointError("the point forecast contains non-finite values")
    for level in lower:
        if np.any(np.isnan(lower[level])) or np.any(np.isnan(upper[level])):
            raise FloatingPointError(f"the {level} % interval contains NaN bounds")
    return Forecast(mean, lower, upper, sample)


def normal_bounds(mean: np.ndarray, sd: np.ndarray, levels: tuple[int, ...]) -> Forecast:
    """Gaussian central intervals ``mean +/- z * sd`` for each level (``z`` from
    ``scipy.special.ndtri``, the function ``scipy.stats.norm.ppf`` evaluates, without its
    argument checking, which cost more than the rest of a forecast)."""
    lower, upper = {}, {}
    for level in levels:
        z = special.ndtri(0.5 + level / 200.0)
        lower[level], upper[level] = mean - z * sd, mean + z * sd
    return Forecast(mean, lower, upper)


def take_fields(body: Mapping[str, Any], family: str, allowed: set[str]) -> dict[str, Any]:
    """Return ``body`` without ``family``; reject keys outside ``allowed``."""
    if not isinstance(body, Mapping):
        raise CandidateError(f"{family} candidate must be a JSON object, got {type(body).__name__}")
    unknown = sorted(set(body) - allowed - {"family"})
    if unknown:
        raise CandidateError(f"{family} candidate: unknown field(s) {', '.join(unknown)}; "
                             f"allowed: {', '.join(sorted(allowed))}")
    return {k: v for k, v in body.items() if k != "family"}


def choice(value: object, options: tuple[str, ...], what: str) -> str:
    """Check that ``value`` is one of ``options``."""
    if value not in options:
        raise CandidateError(f"{what} must be one of {', '.join(options)}; got {value!r}")
    return str(value)


def small_int(value: object, what: str, high: int) -> int:
    """Check that ``value`` is an integer in 0..high."""
    if isinstance(value, bool) or not isinstance(value, int) or not 0 <= value <= high:
        raise CandidateError(f"{what} must be an integer from 0 to {high}; got {value!r}")
    return value


def optional_period(value: object, what: str) -> int | None:
    """A seasonal period of at least 2, or ``None`` for the series' own season length."""
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, int) or value < 2:
        raise CandidateError(f"{what} must be an integer of at least 2 (or omitted to use the "
                             f"series' season length); got {value!r}")
    return value
