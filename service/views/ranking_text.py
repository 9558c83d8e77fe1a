"""How the CLI tables and the run report word a ranking score's basis: the common origins
and a score carried by a minority of its points."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any


def score_cell(row: Mapping[str, Any], shown: str) -> str:
    """The ranking score as shown, with ``(n of N points)`` when fewer than half of its
    possible points carry it (the rest had an undefined or zero training scale)."""
    count, possible = row.get("score_count"), row.get("score_possible")
    if count is None or not possible or 2 * count >= possible:
        return shown
    return f"{shown} ({count} of {possible} points)"


def common_ground(rows: Sequence[Mapping[str, Any]]) -> str:
    """``; scores on the N origins all ranked candidates completed`` when some candidate
    failed folds (its own-folds figure is then the ``own folds`` column), else empty."""
    common = next((r.get("common_folds") for r in rows if r.get("common_folds") is not None),
                  None)
    if common is None or not any(r["folds_failed"] for r in rows):
        return ""
    return f"; scores on the {common} origins every ranked candidate completed"
