"""Read-only SQL views for BI tools that connect to the database instead of the HTTP API.

Revision ID: 0005
Revises: 0004
Create Date: 2026-12-03

The views are the stable, documented surface (``storage/db/bi_views.py`` lists them and
DEVELOPERS.md documents their columns); the tables behind them may change between
versions. Each view is plain SQL that SQLite and PostgreSQL both run.
"""

from collections.abc import Sequence

from alembic import op

revision: str = "0005"
down_revision: str | Sequence[str] | None = "0004"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

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

VIEWS = {
    "bi_latest_ranking": f"""
SELECT l.series_key, l.series_version, l.run_id, l.run_finished_at, sc.metric, sc.horizon,
       sc.level,
       CASE WHEN sc.value IS NULL THEN NULL ELSE rank() OVER (
           PARTITION BY sc.run_id, sc.series_version_id, sc.metric, sc.horizon, sc.level,
                        sc.value IS NULL
           ORDER BY sc.value) END AS rank,
       sc.candidate_id, rc.label AS candidate, sc.candidate_id = l.benchmark_id AS is_benchmark,
       sc.value, sc.count, sc.note
FROM ({LATEST_RUNS}) l
JOIN score sc ON sc.run_id = l.run_id AND sc.series_version_id = l.series_version_id
JOIN result_candidate rc ON rc.run_id = sc.run_id
     AND rc.series_version_id = sc.series_version_id AND rc.candidate_id = sc.candidate_id
""",
    "bi_scores": """
SELECT sc.run_id, r.finished_at AS run_finished_at, s.key AS series_key,
       v.number AS series_version, sc.candidate_id, rc.label AS candidate, sc.horizon,
       sc.metric, sc.level, sc.value, sc.count, sc.note
FROM score sc
JOIN run r ON r.id = sc.run_id
JOIN series_version v ON v.id = sc.series_version_id
JOIN series s ON s.id = v.series_id
JOIN result_candidate rc ON rc.run_id = sc.run_id
     AND rc.series_version_id = sc.series_version_id AND rc.candidate_id = sc.candidate_id
WHERE r.status = 'succeeded'
""",
    "bi_champions": """
SELECT s.key AS series_key, c.id AS choice_id, c.candidate_id, c.run_id, c.reason,
       c.chosen_by, c.chosen_at
FROM champion_choice c
JOIN series s ON s.id = c.series_id
WHERE c.id = (SELECT max(c2.id) FROM champion_choice c2 WHERE c2.series_id = c.series_id)
""",
    "bi_issued_forecasts": """
SELECT f.id AS forecast_id, s.key AS series_key, v.number AS series_version, f.candidate_id,
       f.label AS candidate, f.issued_at, f.issued_by, f.origin, p.horizon, p.period, p.point,
       b.level, b.lower, b.upper, o.series_version AS scored_on_version, o.actual, o.error,
       o.scaled_error, ol.hit, ol.interval_score
FROM issued_forecast f
JOIN series s ON s.id = f.series_id
JOIN series_version v ON v.id = f.series_version_id
JOIN issued_point p ON p.forecast_id = f.id
JOIN issued_bound b ON b.forecast_id = p.forecast_id AND b.horizon = p.horizon
LEFT JOIN (
    SELECT o.*, ov.number AS series_version
    FROM outcome o
    JOIN series_version ov ON ov.id = o.series_version_id
    WHERE ov.number = (SELECT max(v2.number) FROM outcome_set os2
                       JOIN series_version v2 ON v2.id = os2.series_version_id
                       WHERE os2.forecast_id = o.forecast_id)
) o ON o.forecast_id = p.forecast_id AND o.horizon = p.horizon
LEFT JOIN outcome_level ol ON ol.forecast_id = o.forecast_id
     AND ol.series_version_id = o.series_version_id AND ol.horizon = o.horizon
     AND ol.level = b.level
""",
}


def upgrade() -> None:
    for name, body in VIEWS.items():
        op.execute(f"CREATE VIEW {name} AS {body}")


def downgrade() -> None:
    for name in reversed(VIEWS):
        op.execute(f"DROP VIEW {name}")
