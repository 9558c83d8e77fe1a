"""Foldline's model labels: one notation for every family, on every screen and file.

A label is a head, then qualifiers separated by ", "::

    ARIMA(1,0,0)×(0,1,1), m=12, drift
    ETS(A,Ad,A), m=12, log
    Theta, m=12 if tested, λ=0.5
    Seasonal naive, m=12
    ARIMA by AICc, m=12
    Mean of ARIMA+ETS+Theta #3f0a, emp

The published parts keep their published form: the Box–Jenkins orders (p,d,q)×(P,D,Q),
the error/trend/season letters of the exponential-smoothing taxonomy, m for the seasonal
period and λ for the Box–Cox parameter. Everything else is a short plain-word qualifier:
the deterministic term (``drift``, ``const``), ``log``, and ``emp`` for intervals from the
candidate's own past errors (``emp sc`` from scaled errors, ``≥n`` a minimum count of
n). A combination names its rule (``Mean``, ``Median``, ``MCS`` for the mean of the model
confidence set) and its members' families (or their count), with ``#`` and four hex
digits of its members' canonical specs, so that two combinations of the same families
differ. Defaults that change nothing are left out; two specs that forecast
differently never share a label, and every label fits a :data:`COLUMN`-character column:
the rare one that would not (many settings changed at once) is cut at a qualifier and
ends in ``…#`` and four hex digits of the candidate's id (:func:`fit_column`). A new family
builds its label with :func:`compose` and the qualifier helpers here.
"""

from __future__ import annotations

import hashlib
from collections.abc import Mapping, Sequence

from backtest.transforms import Transform

SEPARATOR = ", "
#: Widest label, in characters: every label fits a column this wide.
COLUMN = 40
ETS_LETTERS = {"none": "N", "additive": "A", "multiplicative": "M", "damped": "Ad"}
BENCHMARK_NAMES = {"naive": "Naive", "seasonal_naive": "Seasonal naive", "drift": "Drift",
                   "mean": "Mean"}
DECOMPOSITION_NAMES = {"additive": "add.", "multiplicative": "mult."}
CRITERION_NAMES = {"aicc": "AICc", "aic": "AIC", "bic": "BIC"}
DETERMINISTIC_NAMES = {"none": None, "constant": "const", "drift": "drift"}
RULE_NAMES = {"mean": "Mean", "median": "Median", "confidence_set": "MCS"}
#: A combination member's family in its label (benchmarks by their own name).
MEMBER_NAMES = {"arima": "ARIMA", "ets": "ETS", "theta": "Theta", "arima_search": "Search"}
SHORT_BENCHMARK_NAMES = {"naive": "Naive", "seasonal_naive": "SNaive", "drift": "Drift",
                         "mean": "Mean"}
#: Widest member list before a combination's label gives the count instead.
_MEMBER_LIST = 15


def compose(head: str, *qualifiers: str | None) -> str:
    """``head`` followed by the non-empty ``qualifiers``, comma-separated."""
    return SEPARATOR.join([head, *(q for q in qualifiers if q)])


def season(period: int) -> str:
    """The seasonal-period qualifier, e.g. ``m=12``."""
    return f"m={period}"


def transform_qualifier(transform: Transform) -> str | None:
    """``log``, ``λ=0.5`` (Box–Cox), or nothing for the identity."""
    if transform.kind == "boxcox":
        return f"λ={transform.lam:g}"
    return "log" if transform.kind == "log" else None


def digest(text: str) -> str:
    """Four hex digits of the SHA-256 of ``text``: a short, stable tag."""
    return hashlib.sha256(text.encode()).hexdigest()[:4]


def fit_column(label: str, tag: str) -> str:
    """``label`` if it fits :data:`COLUMN` characters; else its longest prefix ending at a
    qualifier that leaves room for ``…#`` and ``tag`` (four characters)."""
    if len(label) <= COLUMN:
        return label
    room = COLUMN - len(tag) - 2
    parts = label.split(SEPARATOR)
    kept = parts[0][:room]
    for part in parts[1:]:
        if len(kept) + len(SEPARATOR) + len(part) > room:
            break
        kept += SEPARATOR + part
    return f"{kept}…#{tag}"


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
                   DETERMINISTIC_NAMES[deterministic], transform_qualifier(transform))


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
    """``ARIMA by <criterion>`` (the order chosen by that criterion) with its season (or
    ``no season``), the order limits when not the defaults (``≤(p,d,q)×(P,D,Q)``), further
    non-default settings (``extras``) and the transform."""
    where: str | None
    if seasonal and period >= 2:
        where = season(period)
    else:
        where = "no season" if seasonal is False else None
    caps = None
    if dict(limits) != dict(default_limits):
        caps = ("≤" + orders([limits[k] for k in "pdq"]) + "×"
                + orders([limits[k] for k in "PDQ"]))
    return compose(f"ARIMA by {CRITERION_NAMES[criterion]}", where, caps, *extras,
                   transform_qualifier(transform))


def combination_label(rule: str, members: Sequence[tuple[str, str]], canonical: str) -> str:
    """``<Rule> of <member families joined by +> #<digest>`` (rule ``Mean``, ``Median`` or
    ``MCS``, the mean of the model confidence set's members); ``members`` are (family,
    benchmark method or "") pairs, ``canonical`` the members' canonical JSON. With more
    members than fit, ``<Rule> of <n> models``."""
    names = "+".join(SHORT_BENCHMARK_NAMES[method] if family == "benchmark"
                     else MEMBER_NAMES[family] for family, method in members)
    if len(names) > _MEMBER_LIST:
        names = f"{len(members)} models"
    return f"{RULE_NAMES[rule]} of {names} #{digest(canonical)}"


def intervals_qualifier(scaled: bool, min_errors: int, default_min_errors: int) -> str:
    """``emp`` (empirical intervals), ``sc`` when from scaled errors, ``≥n`` when the
    minimum count of errors is not the default."""
    out = "emp" + (" sc" if scaled else "")
    return out + (f" ≥{min_errors}" if min_errors != default_min_errors else "")
