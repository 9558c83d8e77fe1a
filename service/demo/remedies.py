"""What the demo's remedies did, read from the run's ranking: where empirical intervals
changed a model's calibration verdict, and where each combination ranked."""

from __future__ import annotations

from collections.abc import Sequence

from backtest.candidates import parse_candidate
from backtest.demo import COMBINED, DEMO_CANDIDATES, RECALIBRATED


def remedy_lines(rows: Sequence[dict]) -> list[str]:
    """One line per series where recalibration changed the verdict at h = 1, and one per
    series and combination with its rank; ``rows`` are the run's ranking items."""
    ids = [parse_candidate(spec).id for spec in DEMO_CANDIDATES]
    by_series: dict[str, dict[str, dict]] = {}
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
            row = found.get(ids[position])
            if row and row["rank"] is not None:
                where = ", in the confidence set" if row["in_confidence_set"] else ""
                lines.append(f"{key}: {row['candidate']} ranked {row['rank']} of "
                             f"{len(found)}{where}")
    return lines
