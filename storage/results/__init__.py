"""A run's results: writing and reading them one series at a time, their tidy rows, the
flat paged tables, the SQL ranking for BI tools and the questions asked of stored scores.
"""

from storage.results.queries import (
    LatestRun,
    ScorePoint,
    latest_successful_run,
    latest_successful_runs,
    score_history,
    succeeded_run_count,
)
from storage.results.ranking import RANKABLE, ranking_table
from storage.results.store import (
    completed_units,
    load_candidate_folds,
    load_run_result,
    load_series_result,
    pending_units,
    write_series_result,
)
from storage.results.tables import evidence_table, fold_table, plan_levels, rank_table, score_table

__all__ = [
    "LatestRun",
    "RANKABLE",
    "ScorePoint",
    "completed_units",
    "evidence_table",
    "fold_table",
    "latest_successful_run",
    "latest_successful_runs",
    "load_candidate_folds",
    "load_run_result",
    "load_series_result",
    "pending_units",
    "plan_levels",
    "rank_table",
    "ranking_table",
    "score_history",
    "score_table",
    "succeeded_run_count",
    "write_series_result",
]
