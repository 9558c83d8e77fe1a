"""Champions, the ledger of issued forecasts, and their outcomes; all append-only.

Revision ID: 0003
Revises: 0002
Create Date: 2026-12-02

A new champion is a new ``champion_choice`` row, a re-scored forecast a new ``outcome_set``,
so every new table gets the same append-only triggers as the rest of the store (their
messages contain ``foldline_immutable``; the PostgreSQL trigger function comes from revision
0001). An index on ``observation (series_version_id, period)`` lets outcomes find the actuals
of a version by period.
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op
from sqlalchemy.dialects import postgresql

revision: str = "0003"
down_revision: str | Sequence[str] | None = "0002"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

JSON = sa.JSON(none_as_null=True).with_variant(postgresql.JSONB(none_as_null=True), "postgresql")
TIMESTAMP = sa.DateTime(timezone=True)
TABLES = ("champion_choice", "issued_forecast", "issued_point", "issued_bound", "outcome_set",
          "outcome", "outcome_level")


def upgrade() -> None:
    op.create_index(op.f("ix_observation_series_version_id"), "observation",
                    ["series_version_id", "period"])
    _create_champions()
    _create_ledger()
    _create_outcomes()
    if op.get_context().dialect.name == "postgresql":
        _guard_postgresql()
    else:
        _guard_sqlite()


def downgrade() -> None:
    for table in reversed(TABLES):
        op.drop_table(table)
    op.drop_index(op.f("ix_observation_series_version_id"), "observation")


def _int(name: str, nullable: bool = False) -> sa.Column[int]:
    return sa.Column(name, sa.Integer(), nullable=nullable)


def _str(name: str, length: int, nullable: bool = False) -> sa.Column[str]:
    return sa.Column(name, sa.String(length=length), nullable=nullable)


def _float(name: str) -> sa.Column[float]:
    return sa.Column(name, sa.Double(), nullable=True)


def _references(table: str, columns: list[str], target: str, target_columns: list[str],
                ) -> sa.ForeignKeyConstraint:
    return sa.ForeignKeyConstraint(columns, [f"{target}.{c}" for c in target_columns],
                                   name=op.f(f"fk_{table}_{columns[0]}_{target}"))


def _create_champions() -> None:
    op.create_table(
        "champion_choice",
        _int("id"), _int("series_id"), _str("candidate_id", 17), _int("run_id", nullable=True),
        sa.Column("reason", sa.Text(), nullable=False), _str("chosen_by", 200),
        sa.Column("chosen_at", TIMESTAMP, nullable=False),
        _references("champion_choice", ["series_id"], "series", ["id"]),
        _references("champion_choice", ["candidate_id"], "candidate", ["id"]),
        _references("champion_choice", ["run_id"], "run", ["id"]),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_champion_choice")),
    )
    op.create_index(op.f("ix_champion_choice_series_id"), "champion_choice", ["series_id", "id"])


def _create_ledger() -> None:
    op.create_table(
        "issued_forecast",
        _int("id"), _int("series_id"), _int("series_version_id"), _str("candidate_id", 17),
        _str("label", 200), _int("horizon"), _str("levels", 200), _int("seed"),
        _str("origin", 32), sa.Column("params", JSON, nullable=False), _float("scale"),
        _float("scale_sq"), sa.Column("software", JSON, nullable=False),
        sa.Column("warnings", JSON, nullable=False), _str("issued_by", 200),
        sa.Column("issued_at", TIMESTAMP, nullable=False),
        _references("issued_forecast", ["series_id"], "series", ["id"]),
        _references("issued_forecast", ["series_version_id"], "series_version", ["id"]),
        _references("issued_forecast", ["candidate_id"], "candidate", ["id"]),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_issued_forecast")),
        sa.UniqueConstraint("series_version_id", "candidate_id", "horizon", "levels", "seed",
                            name="uq_issued_forecast_inputs"),
    )
    op.create_index(op.f("ix_issued_forecast_series_id"), "issued_forecast",
                    ["series_id", "candidate_id"])
    op.create_index(op.f("ix_issued_forecast_candidate_id"), "issued_forecast",
                    ["candidate_id"])
    op.create_index(op.f("ix_issued_forecast_issued_at"), "issued_forecast", ["issued_at"])
    op.create_table(
        "issued_point",
        _int("forecast_id"), _int("horizon"), _str("period", 32), _float("point"),
        _references("issued_point", ["forecast_id"], "issued_forecast", ["id"]),
        sa.PrimaryKeyConstraint("forecast_id", "horizon", name=op.f("pk_issued_point")),
        sqlite_with_rowid=False,
    )
    point = ["forecast_id", "horizon"]
    op.create_table(
        "issued_bound",
        _int("forecast_id"), _int("horizon"), _int("level"), _float("lower"), _float("upper"),
        _references("issued_bound", point, "issued_point", point),
        sa.PrimaryKeyConstraint(*point, "level", name=op.f("pk_issued_bound")),
        sqlite_with_rowid=False,
    )


def _create_outcomes() -> None:
    scored = ["forecast_id", "series_version_id"]
    outcome = [*scored, "horizon"]
    op.create_table(
        "outcome_set",
        _int("forecast_id"), _int("series_version_id"),
        sa.Column("scored_at", TIMESTAMP, nullable=False), _str("scored_by", 200),
        _references("outcome_set", ["forecast_id"], "issued_forecast", ["id"]),
        _references("outcome_set", ["series_version_id"], "series_version", ["id"]),
        sa.PrimaryKeyConstraint(*scored, name=op.f("pk_outcome_set")),
        sqlite_with_rowid=False,
    )
    op.create_table(
        "outcome",
        *(_int(name) for name in outcome), _str("period", 32), _float("actual"),
        _float("point"), _float("error"), _float("scaled_error"), _float("smape_term"),
        _references("outcome", scored, "outcome_set", scored),
        _references("outcome", ["forecast_id", "horizon"], "issued_point",
                    ["forecast_id", "horizon"]),
        sa.PrimaryKeyConstraint(*outcome, name=op.f("pk_outcome")),
        sqlite_with_rowid=False,
    )
    op.create_table(
        "outcome_level",
        *(_int(name) for name in [*outcome, "level"]),
        sa.Column("hit", sa.Boolean(), nullable=False), _float("interval_score"),
        _references("outcome_level", outcome, "outcome", outcome),
        _references("outcome_level", ["forecast_id", "horizon", "level"], "issued_bound",
                    ["forecast_id", "horizon", "level"]),
        sa.PrimaryKeyConstraint(*outcome, "level", name=op.f("pk_outcome_level")),
        sqlite_with_rowid=False,
    )


def _guard_sqlite() -> None:
    for table in TABLES:
        for action in ("UPDATE", "DELETE"):
            message = f"foldline_immutable: {action} on {table} refused; rows are append-only"
            op.execute(f"CREATE TRIGGER {table}_no_{action.lower()} BEFORE {action} "
                       f"""ON "{table}" BEGIN SELECT RAISE(ABORT, '{message}'); END""")


def _guard_postgresql() -> None:
    for table in TABLES:
        op.execute(f'CREATE TRIGGER {table}_append_only BEFORE UPDATE OR DELETE ON "{table}" '
                   "FOR EACH ROW EXECUTE FUNCTION foldline_refuse_change()")
        op.execute(f'CREATE TRIGGER {table}_no_truncate BEFORE TRUNCATE ON "{table}" '
                   "FOR EACH STATEMENT EXECUTE FUNCTION foldline_refuse_change()")
