"""What the demo's remedies did, read from the run's ranking: where empirical intervals
changed a model's calibration verdict, and where each combination ranked."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from backtest.candidates import parse_candidate
from backtest.demo import COMBINED, DEMO_CANDIDATES, RECALIBRATED


def remedy_lines(rows: Sequence[Mapping[str, Any]]) -> list[str]:
    """One line per series where recalibration changed the verdict at h = 1, and one per
    series and combination with its rank; ``rows`` are the run's ranking items."""
    ids = [parse_candidate(spec).id for spec in DEMO_CANDIDATES]
    by_series: dict[str, dict[str, Mapping[str, Any]]] = {}
    for row in rows:
        by_series.setdefault(row["series_key"], {})[row["candidate_id"]] = row
    lines = []
    for key, found in by_series.items():
        for model, twin in RECALIBRATED:
            own, empirical = found.get(ids[model]), found.get(ids[twin])
            if own and empirical and own["calibration_zone"] != empirical["calibration_zone"]:
                lines.append(f"{key}: {own['candidate']} calibration at h = 1 "
                             f"{own['calibration_zone']}; with empirical intervals "
                             f"{empirical['calibration_zone']}")
        for position in COMBINED:
            combined = found.get(ids[position])
            if combined and combined["rank"] is not None:
                where = ", in the confidence set" if combined["in_confidence_set"] else ""
                lines.append(f"{key}: {combined['candidate']} ranked {combined['rank']} of "
                             f"{len(found)}{where}")
    return lines


def headlines(lines: Sequence[str]) -> list[str]:
    """The remedy lines where a remedy worked: recalibration made a verdict consistent, or
    a combination ranked first."""
    return [line for line in lines
            if line.endswith("with empirical intervals consistent") or " ranked 1 of " in line]
