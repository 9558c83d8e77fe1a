"""Initial schema: series versions, catalog, runs, results, audit log, and their guards.

Revision ID: 0001
Revises:
Create Date: 2026-12-02

Besides the tables, this creates the triggers that make the store append-only: UPDATE and
DELETE (and TRUNCATE on PostgreSQL) are refused on every table except ``run``, and a ``run``
row is frozen once its status is final. Their messages contain ``foldline_immutable``.
"""

from collections.abc import Sequence
from typing import Any

import sqlalchemy as sa
from alembic import op
from sqlalchemy.dialects import postgresql

revision: str = "0001"
down_revision: str | Sequence[str] | None = None
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

JSON = sa.JSON(none_as_null=True).with_variant(postgresql.JSONB(none_as_null=True), "postgresql")
TIMESTAMP = sa.DateTime(timezone=True)
APPEND_ONLY = ("series", "series_version", "observation", "candidate", "plan", "run_series",
               "run_candidate", "series_result", "result_candidate", "fold_result", "forecast",
               "forecast_bound", "fold_warning", "score", "rank_row", "audit_event")
FINAL_STATUSES = "('succeeded', 'failed', 'cancelled')"


def upgrade() -> None:
    _create_tables()
    if op.get_context().dialect.name == "postgresql":
        _create_postgresql_guards()
    else:
        _create_sqlite_guards()


def downgrade() -> None:
    for table in ("forecast_bound", "forecast", "fold_warning", "score", "rank_row",
                  "fold_result", "result_candidate", "series_result", "run_series",
                  "run_candidate", "run", "observation", "series_version", "series", "plan",
                  "candidate", "audit_event"):
        op.drop_table(table)
    if op.get_context().dialect.name == "postgresql":
        op.execute("DROP FUNCTION foldline_refuse_final_run_change()")
        op.execute("DROP FUNCTION foldline_refuse_change()")


def _create_sqlite_guards() -> None:
    for table in APPEND_ONLY:
        for action in ("UPDATE", "DELETE"):
            message = f"foldline_immutable: {action} on {table} refused; rows are append-only"
            op.execute(f'CREATE TRIGGER {table}_no_{action.lower()} BEFORE {action} '
                       f"""ON "{table}" BEGIN SELECT RAISE(ABORT, '{message}'); END""")
    op.execute(f"CREATE TRIGGER run_no_update_when_final BEFORE UPDATE ON run "
               f"WHEN OLD.status IN {FINAL_STATUSES} "
               "BEGIN SELECT RAISE(ABORT, 'foldline_immutable: UPDATE on run refused; "
               "the run is finished'); END")
    op.execute("CREATE TRIGGER run_no_delete BEFORE DELETE ON run "
               "BEGIN SELECT RAISE(ABORT, 'foldline_immutable: DELETE on run refused; "
               "runs are kept'); END")


def _create_postgresql_guards() -> None:
    op.execute("""
        CREATE FUNCTION foldline_refuse_change() RETURNS trigger LANGUAGE plpgsql AS $$
        BEGIN
            RAISE EXCEPTION 'foldline_immutable: % on % refused; rows are append-only',
                TG_OP, TG_TABLE_NAME USING ERRCODE = 'restrict_violation';
        END $$""")
    op.execute(f"""
        CREATE FUNCTION foldline_refuse_final_run_change() RETURNS trigger LANGUAGE plpgsql AS $$
        BEGIN
            IF TG_OP = 'DELETE' OR OLD.status IN {FINAL_STATUSES} THEN
                RAISE EXCEPTION 'foldline_immutable: % on run % refused; the run is finished',
                    TG_OP, OLD.id USING ERRCODE = 'restrict_violation';
            END IF;
            RETURN NEW;
        END $$""")
    for table in APPEND_ONLY:
        op.execute(f'CREATE TRIGGER {table}_append_only BEFORE UPDATE OR DELETE ON "{table}" '
                   "FOR EACH ROW EXECUTE FUNCTION foldline_refuse_change()")
    for table in (*APPEND_ONLY, "run"):
        op.execute(f'CREATE TRIGGER {table}_no_truncate BEFORE TRUNCATE ON "{table}" '
                   "FOR EACH STATEMENT EXECUTE FUNCTION foldline_refuse_change()")
    op.execute("CREATE TRIGGER run_frozen_when_final BEFORE UPDATE OR DELETE ON run "
               "FOR EACH ROW EXECUTE FUNCTION foldline_refuse_final_run_change()")


def _create_tables() -> None:
    _create_catalog()
    _create_runs()
    _create_results()


def _int(name: str, nullable: bool = False) -> sa.Column[int]:
    return sa.Column(name, sa.Integer(), nullable=nullable)


def _str(name: str, length: int, nullable: bool = False) -> sa.Column[str]:
    return sa.Column(name, sa.String(length=length), nullable=nullable)


def _float(name: str, nullable: bool = True) -> sa.Column[float]:
    return sa.Column(name, sa.Double(), nullable=nullable)


def _references(table: str, columns: list[str], target: str, target_columns: list[str],
                ) -> sa.ForeignKeyConstraint:
    return sa.ForeignKeyConstraint(columns, [f"{target}.{c}" for c in target_columns],
                                   name=op.f(f"fk_{table}_{columns[0]}_{target}"))


def _unit_key(*extra: str) -> list[sa.Column[int]]:
    return [_int("run_id"), _int("series_version_id"), *(_int(name) for name in extra)]


def _fold_key(*extra: str) -> list[sa.Column[Any]]:
    return [_int("run_id"), _int("series_version_id"), _str("candidate_id", 17), _int("fold"),
            *(_int(name) for name in extra)]


def _create_catalog() -> None:
    op.create_table(
        "audit_event",
        sa.Column("seq", sa.Integer(), autoincrement=False, nullable=False),
        sa.Column("occurred_at", TIMESTAMP, nullable=False),
        _str("actor", 200), _str("action", 32), _str("subject", 200), _str("digest", 64),
        _str("prev_hash", 64), _str("hash", 64),
        sa.PrimaryKeyConstraint("seq", name=op.f("pk_audit_event")),
        sa.UniqueConstraint("hash", name=op.f("uq_audit_event_hash")),
        sa.UniqueConstraint("prev_hash", name=op.f("uq_audit_event_prev_hash")),
    )
    op.create_index(op.f("ix_audit_event_occurred_at"), "audit_event", ["occurred_at"])
    op.create_table(
        "candidate",
        _str("id", 17), _str("family", 32), sa.Column("spec", JSON, nullable=False),
        sa.Column("created_at", TIMESTAMP, nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_candidate")),
    )
    op.create_table(
        "plan",
        _str("id", 64), sa.Column("body", JSON, nullable=False),
        sa.Column("created_at", TIMESTAMP, nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_plan")),
    )
    op.create_table(
        "series",
        _int("id"), _str("key", 200), _str("frequency", 32), _int("season_length"),
        _str("unit", 32, nullable=True), sa.Column("tags", JSON, nullable=False),
        sa.Column("created_at", TIMESTAMP, nullable=False), _str("created_by", 200),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_series")),
        sa.UniqueConstraint("key", name=op.f("uq_series_key")),
    )
    op.create_table(
        "series_version",
        _int("id"), _int("series_id"), _int("number"), _str("fingerprint", 64),
        _str("change", 32), _int("n_obs"), _str("first_period", 32), _str("last_period", 32),
        _str("fill_policy", 32), sa.Column("created_at", TIMESTAMP, nullable=False),
        _str("created_by", 200),
        sa.CheckConstraint("change IN ('initial', 'append', 'revision')",
                           name=op.f("ck_series_version_change")),
        _references("series_version", ["series_id"], "series", ["id"]),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_series_version")),
        sa.UniqueConstraint("fingerprint", name=op.f("uq_series_version_fingerprint")),
        sa.UniqueConstraint("series_id", "number",
                            name=op.f("uq_series_version_series_id_number")),
    )
    op.create_table(
        "observation",
        _int("series_version_id"), _int("position"), _str("period", 32),
        _float("value", nullable=False), sa.Column("filled", sa.Boolean(), nullable=False),
        _references("observation", ["series_version_id"], "series_version", ["id"]),
        sa.PrimaryKeyConstraint("series_version_id", "position", name=op.f("pk_observation")),
        sqlite_with_rowid=False,
    )


def _create_runs() -> None:
    op.create_table(
        "run",
        _int("id"), _str("plan_id", 64), _int("seed"), _str("requested_by", 200),
        _str("idempotency_key", 200, nullable=True), _str("status", 32),
        sa.Column("queued_at", TIMESTAMP, nullable=False),
        sa.Column("started_at", TIMESTAMP, nullable=True),
        sa.Column("finished_at", TIMESTAMP, nullable=True),
        _int("folds_done"), _int("folds_total", nullable=True),
        sa.Column("software", JSON, nullable=True), sa.Column("timing", JSON, nullable=True),
        sa.Column("failure_reason", sa.Text(), nullable=True),
        _str("lease_owner", 200, nullable=True),
        sa.Column("lease_expires_at", TIMESTAMP, nullable=True), _int("attempts"),
        sa.CheckConstraint(f"status IN ('queued', 'running', {FINAL_STATUSES[1:-1]})",
                           name=op.f("ck_run_status")),
        _references("run", ["plan_id"], "plan", ["id"]),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_run")),
        sa.UniqueConstraint("idempotency_key", name=op.f("uq_run_idempotency_key")),
    )
    op.create_index(op.f("ix_run_status"), "run", ["status"])
    op.create_table(
        "run_candidate",
        _int("run_id"), _str("candidate_id", 17), _int("position"),
        _references("run_candidate", ["candidate_id"], "candidate", ["id"]),
        _references("run_candidate", ["run_id"], "run", ["id"]),
        sa.PrimaryKeyConstraint("run_id", "candidate_id", name=op.f("pk_run_candidate")),
        sa.UniqueConstraint("run_id", "position", name=op.f("uq_run_candidate_run_id_position")),
        sqlite_with_rowid=False,
    )
    op.create_table(
        "run_series",
        _int("run_id"), _int("series_version_id"), _int("position"),
        _references("run_series", ["run_id"], "run", ["id"]),
        _references("run_series", ["series_version_id"], "series_version", ["id"]),
        sa.PrimaryKeyConstraint("run_id", "series_version_id", name=op.f("pk_run_series")),
        sa.UniqueConstraint("run_id", "position", name=op.f("uq_run_series_run_id_position")),
        sqlite_with_rowid=False,
    )
    op.create_index(op.f("ix_run_series_series_version_id"), "run_series",
                    ["series_version_id"])


def _create_results() -> None:
    unit = ["run_id", "series_version_id"]
    candidate = [*unit, "candidate_id"]
    fold = [*candidate, "fold"]
    op.create_table(
        "series_result",
        *_unit_key(), _str("benchmark_id", 17), sa.Column("summary", JSON, nullable=False),
        sa.Column("evidence", JSON, nullable=False),
        sa.Column("written_at", TIMESTAMP, nullable=False), _str("written_by", 200),
        _references("series_result", ["benchmark_id"], "candidate", ["id"]),
        _references("series_result", unit, "run_series", unit),
        sa.PrimaryKeyConstraint(*unit, name=op.f("pk_series_result")),
        sqlite_with_rowid=False,
    )
    op.create_table(
        "result_candidate",
        *_unit_key(), _str("candidate_id", 17), _int("position"), _str("label", 200),
        sa.Column("added_as_benchmark", sa.Boolean(), nullable=False),
        _references("result_candidate", ["candidate_id"], "candidate", ["id"]),
        _references("result_candidate", unit, "series_result", unit),
        sa.PrimaryKeyConstraint(*candidate, name=op.f("pk_result_candidate")),
        sqlite_with_rowid=False,
    )
    op.create_table(
        "fold_result",
        *_fold_key(), _int("position"), _str("origin", 32), _str("train_start", 32),
        _int("train_size"), sa.Column("reestimated", sa.Boolean(), nullable=False),
        _str("status", 32), sa.Column("reason", sa.Text(), nullable=True),
        sa.Column("params", JSON, nullable=True), sa.Column("fit_summary", JSON, nullable=True),
        sa.Column("has_point", sa.Boolean(), nullable=False), _float("scale"),
        _float("scale_sq"),
        sa.CheckConstraint("status IN ('ok', 'failed')", name=op.f("ck_fold_result_status")),
        _references("fold_result", candidate, "result_candidate", candidate),
        sa.PrimaryKeyConstraint(*fold, name=op.f("pk_fold_result")),
        sqlite_with_rowid=False,
    )
    op.create_table(
        "rank_row",
        *_unit_key("position"), _str("candidate_id", 17), _int("rank", nullable=True),
        _str("label", 200), _float("score"), _float("skill"),
        sa.Column("is_benchmark", sa.Boolean(), nullable=False), _int("folds_ok"),
        _int("folds_failed"), sa.Column("in_confidence_set", sa.Boolean(), nullable=True),
        sa.Column("beats_benchmark", sa.Boolean(), nullable=True),
        _str("calibration_zone", 32, nullable=True),
        _references("rank_row", candidate, "result_candidate", candidate),
        sa.PrimaryKeyConstraint(*unit, "position", name=op.f("pk_rank_row")),
        sqlite_with_rowid=False,
    )
    op.create_table(
        "score",
        *_unit_key("position"), _str("candidate_id", 17), _str("metric", 32),
        _int("level", nullable=True), _int("horizon", nullable=True), _float("value"),
        _int("count"), sa.Column("note", sa.Text(), nullable=True),
        _references("score", candidate, "result_candidate", candidate),
        sa.PrimaryKeyConstraint(*unit, "position", name=op.f("pk_score")),
        sqlite_with_rowid=False,
    )
    op.create_index(op.f("ix_score_series_version_id"), "score",
                    ["series_version_id", "candidate_id", "metric"])
    op.create_index(op.f("ix_score_run_id"), "score",
                    ["run_id", "series_version_id", "metric", "horizon", "level"])
    op.create_table(
        "fold_warning",
        *_fold_key("position"), sa.Column("message", sa.Text(), nullable=False),
        _references("fold_warning", fold, "fold_result", fold),
        sa.PrimaryKeyConstraint(*fold, "position", name=op.f("pk_fold_warning")),
        sqlite_with_rowid=False,
    )
    op.create_table(
        "forecast",
        *_fold_key("horizon"), _str("origin", 32), _str("period", 32),
        _float("actual", nullable=False), _float("point"),
        _references("forecast", fold, "fold_result", fold),
        sa.PrimaryKeyConstraint(*fold, "horizon", name=op.f("pk_forecast")),
        sqlite_with_rowid=False,
    )
    op.create_table(
        "forecast_bound",
        *_fold_key("horizon", "level"), _float("lower"), _float("upper"),
        _references("forecast_bound", [*fold, "horizon"], "forecast", [*fold, "horizon"]),
        sa.PrimaryKeyConstraint(*fold, "horizon", "level", name=op.f("pk_forecast_bound")),
        sqlite_with_rowid=False,
    )
