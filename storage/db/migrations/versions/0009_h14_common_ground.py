"""Scores on common ground, and the BI ranking view ranking on them.

Revision ID: 0009_h14
Revises: 0009_h19b
Create Date: 2026-12-03

Each score row gains the same score over the origins every candidate with a defined value
completed (``common_value``, ``common_count``, ``common_note``; ``common_folds`` origins),
the ground a run's own ranking compares candidates on. The view ``bi_latest_ranking`` ranks
on it: its ``value``, ``count`` and ``note`` are the common-ground figures, and two columns
are appended, ``common_folds`` and ``value_own_folds`` (the candidate's own-folds value).
Rows written before this revision have no common-ground figures; the view shows their
own-folds figures with ``common_folds`` null. On PostgreSQL the view is replaced in place,
so roles granted it keep their grant. Downgrading drops the figures, and with them content
the audit log recorded for runs stored at this revision: ``audit verify`` then reports
those runs.
"""

from collections.abc import Sequence
from typing import Any

import sqlalchemy as sa
from alembic import op

revision: str = "0009_h14"
down_revision: str | Sequence[str] | None = "0009_h19b"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

COLUMNS: tuple[tuple[str, sa.types.TypeEngine[Any]], ...] = (
    ("common_value", sa.Double()),
    ("common_count", sa.Integer()),
    ("common_note", sa.Text()),
    ("common_folds", sa.Integer()),
)

LATEST_RUNS = """
SELECT s.key AS series_key, s.id AS series_id, v.id AS series_version_id,
       v.number AS series_version, r.id AS run_id, r.finished_at AS run_finished_at,
       sr.benchmark_id AS benchmark_id
FROM (SELECT sr.*, row_number() OVER (PARTITION BY v.series_id
                                      ORDER BY r.finished_at DESC, r.id DESC) AS recency
      FROM series_result sr
      JOIN run r ON r.id = sr.run_id
      JOIN series_version v ON v.id = sr.series_version_id
      WHERE r.status = 'succeeded') sr
JOIN run r ON r.id = sr.run_id
JOIN series_version v ON v.id = sr.series_version_id
JOIN series s ON s.id = v.series_id
WHERE sr.recency = 1
"""

#: Score rows with the figures the view ranks on: common ground where stored.
ON_COMMON_GROUND = """
SELECT run_id, series_version_id, candidate_id, metric, horizon, level, common_folds,
       value AS value_own_folds,
       CASE WHEN common_count IS NULL THEN value ELSE common_value END AS value,
       CASE WHEN common_count IS NULL THEN count ELSE common_count END AS count,
       CASE WHEN common_count IS NULL THEN note ELSE common_note END AS note
FROM score
"""


def _ranking(scores: str, appended: str) -> str:
    return f"""
SELECT l.series_key, l.series_version, l.run_id, l.run_finished_at, sc.metric, sc.horizon,
       sc.level,
       CASE WHEN sc.value IS NULL THEN NULL ELSE rank() OVER (
           PARTITION BY sc.run_id, sc.series_version_id, sc.metric, sc.horizon, sc.level,
                        sc.value IS NULL
           ORDER BY sc.value) END AS rank,
       sc.candidate_id, rc.label AS candidate, sc.candidate_id = l.benchmark_id AS is_benchmark,
       sc.value, sc.count, sc.note{appended}
FROM ({LATEST_RUNS}) l
JOIN {scores} sc ON sc.run_id = l.run_id AND sc.series_version_id = l.series_version_id
JOIN result_candidate rc ON rc.run_id = sc.run_id
     AND rc.series_version_id = sc.series_version_id AND rc.candidate_id = sc.candidate_id
"""


COMMON_GROUND_VIEW = _ranking(f"({ON_COMMON_GROUND})", ", sc.common_folds, sc.value_own_folds")
OWN_FOLDS_VIEW = _ranking("score", "")


def upgrade() -> None:
    for name, kind in COLUMNS:
        op.add_column("score", sa.Column(name, kind, nullable=True))
    _replace_view(COMMON_GROUND_VIEW)


def downgrade() -> None:
    op.execute("DROP VIEW bi_latest_ranking")
    op.execute(f"CREATE VIEW bi_latest_ranking AS {OWN_FOLDS_VIEW}")
    for name, _ in reversed(COLUMNS):
        op.execute(f"ALTER TABLE score DROP COLUMN {name}")


def _replace_view(body: str) -> None:
    if op.get_bind().dialect.name == "postgresql":
        op.execute(f"CREATE OR REPLACE VIEW bi_latest_ranking AS {body}")
    else:
        op.execute("DROP VIEW bi_latest_ranking")
        op.execute(f"CREATE VIEW bi_latest_ranking AS {body}")
