"""Variance-stabilising transforms applied before fitting and undone on forecasts.

Bounds are transformed back by the inverse, which is monotone, so a central interval on
the transformed scale stays a central interval (of the same level) on the original scale.
The back-transformed point forecast is the median of the forecast distribution, not its
mean.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from backtest.errors import CandidateError

TransformKind = Literal["none", "log", "boxcox"]


@dataclass(frozen=True)
class Transform:
    """``none``, ``log`` or Box-Cox with parameter ``lam`` (Box & Cox 1964)."""

    kind: TransformKind = "none"
    lam: float | None = None

    @property
    def needs_positive(self) -> bool:
        return self.kind != "none"

    def forward(self, y: np.ndarray) -> np.ndarray:
        if self.kind == "none":
            return y
        if self.kind == "log" or self.lam == 0:
            logged: np.ndarray = np.log(y)
            return logged
        lam = self._lambda()
        transformed: np.ndarray = (np.power(y, lam) - 1.0) / lam
        return transformed

    def inverse(self, z: np.ndarray) -> np.ndarray:
        """Back to the original scale; beyond the Box-Cox range, 0 (lam > 0) or inf (lam < 0)."""
        if self.kind == "none":
            return z
        if self.kind == "log" or self.lam == 0:
            exponentiated: np.ndarray = np.exp(z)
            return exponentiated
        lam = self._lambda()
        base = lam * np.asarray(z) + 1.0
        with np.errstate(divide="ignore", invalid="ignore"):
            out = np.power(np.where(base > 0, base, 1.0), 1.0 / lam)
        return np.where(base > 0, out, 0.0 if lam > 0 else np.inf)

    def _lambda(self) -> float:
        if self.lam is None:
            raise CandidateError("transform: Box-Cox needs its lambda")
        return self.lam

    def canonical(self) -> dict[str, Any]:
        return {"kind": self.kind, "lambda": self.lam}


def parse_transform(body: object) -> Transform:
    """Read ``"none"``, ``"log"`` or ``{"kind": "boxcox", "lambda": x}``."""
    if body is None or body == "none":
        return Transform()
    if body == "log":
        return Transform("log")
    keys = set(body) if isinstance(body, dict) else set()
    if isinstance(body, dict) and keys:
        if body.get("kind") in ("none", "log") and keys <= {"kind", "lambda"}:
            return parse_transform(body["kind"])
        if keys == {"kind", "lambda"} and body.get("kind") == "boxcox":
            return Transform("boxcox", _boxcox_lambda(body["lambda"]))
    raise CandidateError(
        f"transform {body!r} is not understood; use \"none\", \"log\" or "
        '{"kind": "boxcox", "lambda": <number>}'
    )


def _boxcox_lambda(lam: object) -> float:
    if isinstance(lam, bool) or not isinstance(lam, int | float) or not np.isfinite(lam):
        raise CandidateError(f"transform: Box-Cox lambda must be a finite number, got {lam!r}")
    if not -2.0 <= lam <= 2.0:
        raise CandidateError(f"transform: Box-Cox lambda {lam} is outside [-2, 2]")
    return float(lam)
