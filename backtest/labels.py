"""Foldline's model labels: one notation for every family, on every screen and file.

A label is a head, then qualifiers separated by ", "::

    ARIMA(1,0,0)×(0,1,1), season 12, drift
    ETS(A,Ad,A), season 12, log
    Theta, season 12 if tested, Box-Cox 0.5
    Seasonal naive, season 12
    ARIMA search by AICc, season 12

The published parts keep their published form: the Box–Jenkins orders (p,d,q)×(P,D,Q)
and the error/trend/season letters of the exponential-smoothing taxonomy. Everything
else is a plain-word qualifier: the seasonal period is ``season m``, the deterministic
term is its name, the transform is ``log`` or ``Box-Cox λ``. Defaults that change
nothing are left out, so the common labels fit a 40-character column; two specs that
forecast differently never share a label. A new family (or a combination of
candidates) builds its label with :func:`compose` and the qualifier helpers here.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from backtest.transforms import Transform

SEPARATOR = ", "
ETS_LETTERS = {"none": "N", "additive": "A", "multiplicative": "M", "damped": "Ad"}
BENCHMARK_NAMES = {"naive": "Naive", "seasonal_naive": "Seasonal naive", "drift": "Drift",
                   "mean": "Mean"}
DECOMPOSITION_NAMES = {"additive": "add.", "multiplicative": "mult."}
CRITERION_NAMES = {"aicc": "AICc", "aic": "AIC", "bic": "BIC"}


def compose(head: str, *qualifiers: str | None) -> str:
    """``head`` followed by the non-empty ``qualifiers``, comma-separated."""
    return SEPARATOR.join([head, *(q for q in qualifiers if q)])


def season(period: int) -> str:
    """The seasonal-period qualifier, e.g. ``season 12``."""
    return f"season {period}"


def transform_qualifier(transform: Transform) -> str | None:
    """``log``, ``Box-Cox 0.5``, or nothing for the identity."""
    if transform.kind == "boxcox":
        return f"Box-Cox {transform.lam:g}"
    return "log" if transform.kind == "log" else None


def orders(values: Sequence[int]) -> str:
    """A Box–Jenkins order tuple, e.g. ``(0,1,1)``."""
    return "(" + ",".join(str(v) for v in values) + ")"


def arima_label(order: Sequence[int], seasonal: Sequence[int] | None, period: int,
                deterministic: str, transform: Transform) -> str:
    """``ARIMA(p,d,q)`` with ``×(P,D,Q)`` and ``season m`` when seasonal."""
    head = "ARIMA" + orders(order)
    if seasonal is not None:
        head += "×" + orders(seasonal)
    return compose(head, season(period) if seasonal is not None else None,
                   None if deterministic == "none" else deterministic,
                   transform_qualifier(transform))


def ets_label(error: str, trend: str, seasonality: str, period: int,
              transform: Transform) -> str:
    """``ETS(E,T,S)`` in the taxonomy's letters, with ``season m`` when seasonal."""
    head = "ETS(" + ",".join(ETS_LETTERS[c] for c in (error, trend, seasonality)) + ")"
    return compose(head, season(period) if seasonality != "none" else None,
                   transform_qualifier(transform))


def theta_label(seasonal: bool, mode: str, decomposition: str, period: int,
                transform: Transform) -> str:
    """``Theta``; the season qualifier says when it is removed (``if tested``, always, or
    ``no season``) and how (``add.``/``mult.`` unless chosen automatically)."""
    how = "" if decomposition == "auto" else f"{DECOMPOSITION_NAMES[decomposition]} "
    phrase: str | None
    if seasonal:
        phrase = f"{how}{season(period)}" + (" if tested" if mode == "test" else "")
    elif mode == "never":
        phrase = "no season" + (f" ({how.strip()})" if how else "")
    else:
        phrase = how.strip() or None
    return compose("Theta", phrase, transform_qualifier(transform))


def benchmark_label(method: str, period: int) -> str:
    """The benchmark's name; the seasonal naive one says its season."""
    return compose(BENCHMARK_NAMES[method],
                   season(period) if method == "seasonal_naive" else None)


def search_label(criterion: str, period: int, seasonal: bool, limits: Mapping[str, int],
                 default_limits: Mapping[str, int], extras: Sequence[str | None],
                 transform: Transform) -> str:
    """``ARIMA search by <criterion>`` with its season (or ``no season``), the order limits
    when not the defaults, further non-default settings (``extras``) and the transform."""
    where: str | None
    if seasonal and period >= 2:
        where = season(period)
    else:
        where = "no season" if seasonal is False else None
    caps = None
    if dict(limits) != dict(default_limits):
        caps = ("up to " + orders([limits[k] for k in "pdq"]) + "×"
                + orders([limits[k] for k in "PDQ"]))
    return compose(f"ARIMA search by {CRITERION_NAMES[criterion]}", where, caps, *extras,
                   transform_qualifier(transform))
