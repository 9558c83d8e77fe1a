"""Stepwise neighbourhood search over ARMA orders (Hyndman & Khandakar 2008).

The search knows nothing about fitting: it calls a scoring function (lower is better,
``inf`` for an order that was rejected) at most once per order and at most ``max_models``
times in all. It scores four starting orders, takes the best as the current order, then
moves to the first neighbour that scores lower, until no neighbour does or the budget is
spent.

References
----------
Hyndman, R. J. and Khandakar, Y. (2008). Automatic time series forecasting: the forecast
package for R. *Journal of Statistical Software* 27(3).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace

#: (p, q, P, Q) of the starting models.
STARTING_ORDERS = ((2, 2, 1, 1), (0, 0, 0, 0), (1, 0, 1, 0), (0, 1, 0, 1))


@dataclass(frozen=True)
class ArmaOrders:
    """The searched part of a model: AR/MA orders, seasonal AR/MA orders, a deterministic term."""

    p: int
    q: int
    seasonal_p: int
    seasonal_q: int
    deterministic: bool


@dataclass(frozen=True)
class SearchBounds:
    """Largest orders allowed; zero seasonal bounds make the search non-seasonal.

    ``deterministic`` says whether the model may carry a deterministic term at all.
    """

    p: int
    q: int
    seasonal_p: int
    seasonal_q: int
    deterministic: bool

    def admits(self, orders: ArmaOrders) -> bool:
        """Whether every order is within 0..bound and the term is allowed."""
        pairs = ((orders.p, self.p), (orders.q, self.q), (orders.seasonal_p, self.seasonal_p),
                 (orders.seasonal_q, self.seasonal_q))
        return (all(0 <= value <= bound for value, bound in pairs)
                and (self.deterministic or not orders.deterministic))


def starting_orders(bounds: SearchBounds) -> list[ArmaOrders]:
    """(2,2)(1,1), (0,0)(0,0), (1,0)(1,0), (0,1)(0,1), clipped to the bounds, duplicates dropped.

    Each carries the deterministic term whenever the bounds allow one.
    """
    out: list[ArmaOrders] = []
    for p, q, seasonal_p, seasonal_q in STARTING_ORDERS:
        orders = ArmaOrders(min(p, bounds.p), min(q, bounds.q), min(seasonal_p, bounds.seasonal_p),
                            min(seasonal_q, bounds.seasonal_q), bounds.deterministic)
        if orders not in out:
            out.append(orders)
    return out


def neighbours(current: ArmaOrders, bounds: SearchBounds) -> list[ArmaOrders]:
    """The up to 13 moves: each order +-1, (p, q) and (P, Q) jointly +-1, the term toggled."""
    moves = []
    for step in (-1, 1):
        moves += [replace(current, p=current.p + step), replace(current, q=current.q + step),
                  replace(current, seasonal_p=current.seasonal_p + step),
                  replace(current, seasonal_q=current.seasonal_q + step)]
    for step in (-1, 1):
        moves.append(replace(current, p=current.p + step, q=current.q + step))
        moves.append(replace(current, seasonal_p=current.seasonal_p + step,
                             seasonal_q=current.seasonal_q + step))
    moves.append(replace(current, deterministic=not current.deterministic))
    return [m for m in moves if bounds.admits(m)]


def stepwise_search(score: Callable[[ArmaOrders], float], bounds: SearchBounds,
                    max_models: int) -> list[ArmaOrders]:
    """Every order scored with a finite value, best first; the first is the search's choice.

    The current order always has the lowest score seen so far, so the order the search
    ends on heads the list. Ties keep the order in which orders were scored.

    Parameters
    ----------
    score
        Criterion of an order, lower is better; ``inf`` marks a rejected order.
    bounds
        Largest orders allowed.
    max_models
        Most orders scored in all (the starting orders count).
    """
    scores: dict[ArmaOrders, float] = {}

    def value(orders: ArmaOrders) -> float:
        if orders not in scores and len(scores) < max_models:
            scores[orders] = score(orders)
        return scores.get(orders, math.inf)

    current = min(starting_orders(bounds), key=value)
    moved = True
    while moved and len(scores) < max_models:
        moved = False
        for orders in neighbours(current, bounds):
            if value(orders) < value(current):
                current, moved = orders, True
                break
    return sorted((o for o in scores if math.isfinite(scores[o])), key=scores.__getitem__)
