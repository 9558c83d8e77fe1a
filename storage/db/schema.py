"""The tables: series versions, candidates, plans, runs, their results, the audit log, API keys,
champions, the ledger of issued forecasts and their outcomes.

Result rows are tidy and keyed by natural ids so SQL and BI users can query them directly:
``forecast`` has one row per run x series version x candidate x fold x horizon (origin,
period, actual, point); prediction bounds are rows of ``forecast_bound``, one per level
(``lower``/``upper``), because the levels are chosen per plan. Issued forecasts
(``issued_point``, ``issued_bound``) and their outcomes (``outcome``, ``outcome_level``)
are stored the same way. A ``NULL`` float stands for NaN (SQLite cannot store NaN);
``fold_result.has_point`` tells a failed fold (no forecast at all) apart from a NaN point.

Everything except ``run``, ``audit_verification`` and ``series_skeleton`` is append-only:
database triggers created by the migrations refuse UPDATE and DELETE, and a ``run`` row is
frozen once its status is final. On SQLite, tables with composite natural keys are
``WITHOUT ROWID`` (stored once, in key order).
"""

from __future__ import annotations

from datetime import datetime
from typing import TYPE_CHECKING, Annotated, Any, ClassVar

from sqlalchemy import (
    CheckConstraint,
    Double,
    ForeignKey,
    ForeignKeyConstraint,
    Index,
    MetaData,
    String,
    Table,
    Text,
    UniqueConstraint,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column

from storage.db.types import ADDED_LATER, JsonType, UtcDateTime

NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_N_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}
RUN_STATUSES = ("queued", "running", "succeeded", "failed", "cancelled")
FINAL_STATUSES = ("succeeded", "failed", "cancelled")
VERSION_CHANGES = ("initial", "append", "revision")
ROLES = ("submitter", "reader", "auditor", "admin")
NO_ROWID = {"sqlite_with_rowid": False}

Json = dict[str, Any]
Name = Annotated[str, 200]
Label = Annotated[str, 32]
Digest = Annotated[str, 64]
CandidateId = Annotated[str, 17]
RunKey = Annotated[int, mapped_column(ForeignKey("run.id"), primary_key=True)]
VersionKey = Annotated[int, mapped_column(ForeignKey("series_version.id"), primary_key=True)]
PartKey = Annotated[int, mapped_column(primary_key=True)]
CandidateKey = Annotated[str, mapped_column(String(17), primary_key=True)]


class Base(DeclarativeBase):
    """Declarative base with the naming convention and the shared column types."""

    metadata = MetaData(naming_convention=NAMING_CONVENTION)
    if TYPE_CHECKING:
        # Every model here declares its own table, so its __table__ is a Table, not just
        # the FromClause that DeclarativeBase promises (SQLAlchemy also maps views and joins).
        __table__: ClassVar[Table]
    type_annotation_map = {
        Json: JsonType,
        datetime: UtcDateTime(),
        float: Double(),
        Name: String(200),
        Label: String(32),
        Digest: String(64),
        CandidateId: String(17),
    }


def _in(column: str, values: tuple[str, ...], name: str) -> CheckConstraint:
    return CheckConstraint(f"{column} IN ({', '.join(repr(v) for v in values)})", name=name)


class SeriesRecord(Base):
    """A named series; its data lives in immutable versions."""

    __tablename__ = "series"

    id: Mapped[int] = mapped_column(primary_key=True)
    key: Mapped[Name] = mapped_column(unique=True)
    frequency: Mapped[Label]
    season_length: Mapped[int]
    unit: Mapped[Label | None]
    tags: Mapped[Json]
    created_at: Mapped[datetime]
    created_by: Mapped[Name]


class SeriesSkeleton(Base):
    """The skeleton of a series' key (:mod:`storage.series.skeleton`), looked up to refuse a new
    key that looks like a stored one; derived from the key, so not audited."""

    __tablename__ = "series_skeleton"

    series_id: Mapped[int] = mapped_column(ForeignKey("series.id"), primary_key=True)
    skeleton: Mapped[str] = mapped_column(Text, index=True)  # NFD: may outgrow the key


class SeriesVersion(Base):
    """One immutable set of observations of a series, identified by its fingerprint."""

    __tablename__ = "series_version"
    __table_args__ = (UniqueConstraint("series_id", "number"),
                      _in("change", VERSION_CHANGES, "change"))

    id: Mapped[int] = mapped_column(primary_key=True)
    series_id: Mapped[int] = mapped_column(ForeignKey("series.id"))
    number: Mapped[int]
    fingerprint: Mapped[Digest] = mapped_column(unique=True)
    change: Mapped[Label]
    n_obs: Mapped[int]
    first_period: Mapped[Label]
    last_period: Mapped[Label]
    fill_policy: Mapped[Label]
    created_at: Mapped[datetime]
    created_by: Mapped[Name]


class Observation(Base):
    """One observation of a series version; ``filled`` marks a value made by a fill policy."""

    __tablename__ = "observation"
    # outcomes look up the actuals of a version by period
    __table_args__ = (Index(None, "series_version_id", "period"), NO_ROWID)

    series_version_id: Mapped[VersionKey]
    position: Mapped[PartKey]
    period: Mapped[Label]
    value: Mapped[float]
    filled: Mapped[bool]


class CandidateRecord(Base):
    """A candidate model by its canonical spec; ``id`` is derived from that spec."""

    __tablename__ = "candidate"

    id: Mapped[CandidateId] = mapped_column(primary_key=True)
    family: Mapped[Label]
    spec: Mapped[Json]
    created_at: Mapped[datetime]


class PlanRecord(Base):
    """A backtest plan by its canonical body; ``id`` is the SHA-256 of its canonical JSON."""

    __tablename__ = "plan"

    id: Mapped[Digest] = mapped_column(primary_key=True)
    body: Mapped[Json]
    created_at: Mapped[datetime]


class Run(Base):
    """A requested backtest: what, by whom, and its lifecycle; frozen once final.

    ``estimated_fits`` is the model-fit estimate made at submission, which per-key budgets
    add up (null on runs queued before it was kept). The indexes by requester serve per-key
    quotas and the fair claim order (a requester's running runs and its last start).
    """

    __tablename__ = "run"
    __table_args__ = (_in("status", RUN_STATUSES, "status"),
                      Index("ix_run_requested_by_status", "requested_by", "status"),
                      Index("ix_run_requested_by_started_at", "requested_by", "started_at"))

    id: Mapped[int] = mapped_column(primary_key=True)
    plan_id: Mapped[Digest] = mapped_column(ForeignKey("plan.id"))
    seed: Mapped[int]
    requested_by: Mapped[Name]
    idempotency_key: Mapped[Name | None] = mapped_column(unique=True)
    status: Mapped[Label] = mapped_column(index=True)
    queued_at: Mapped[datetime]
    started_at: Mapped[datetime | None]
    finished_at: Mapped[datetime | None]
    folds_done: Mapped[int]
    folds_total: Mapped[int | None]
    software: Mapped[Json | None]
    timing: Mapped[Json | None]
    failure_reason: Mapped[str | None] = mapped_column(Text)
    lease_owner: Mapped[Name | None]
    lease_expires_at: Mapped[datetime | None]
    attempts: Mapped[int]
    estimated_fits: Mapped[int | None] = mapped_column(info={ADDED_LATER: None})


class RunSeries(Base):
    """A series version a run was asked to backtest, in request order."""

    __tablename__ = "run_series"
    __table_args__ = (UniqueConstraint("run_id", "position"), NO_ROWID)

    run_id: Mapped[RunKey]
    series_version_id: Mapped[VersionKey] = mapped_column(index=True)
    position: Mapped[int]
    #: the unit's folds, counted when the run was checked at submission (null before 0008)
    folds: Mapped[int | None] = mapped_column(info={ADDED_LATER: None})


class RunCandidate(Base):
    """A candidate a run was asked to backtest, in request order."""

    __tablename__ = "run_candidate"
    __table_args__ = (UniqueConstraint("run_id", "position"), NO_ROWID)

    run_id: Mapped[RunKey]
    candidate_id: Mapped[CandidateId] = mapped_column(ForeignKey("candidate.id"),
                                                      primary_key=True)
    position: Mapped[int]


class SeriesResultRecord(Base):
    """The results of one series version in one run: the unit of work written at once."""

    __tablename__ = "series_result"
    __table_args__ = (
        ForeignKeyConstraint(["run_id", "series_version_id"],
                             ["run_series.run_id", "run_series.series_version_id"]),
        # finding latest runs reads the keys alone, never the wide evidence rows
        Index(None, "run_id", "series_version_id", "benchmark_id"),
        NO_ROWID,
    )

    run_id: Mapped[int] = mapped_column(primary_key=True)
    series_version_id: Mapped[int] = mapped_column(primary_key=True)
    benchmark_id: Mapped[CandidateId] = mapped_column(ForeignKey("candidate.id"))
    summary: Mapped[Json]
    evidence: Mapped[Json]
    written_at: Mapped[datetime]
    written_by: Mapped[Name]


_UNIT = ["series_result.run_id", "series_result.series_version_id"]
_RESULT_CANDIDATE = ["result_candidate.run_id", "result_candidate.series_version_id",
                     "result_candidate.candidate_id"]
_FOLD = ["fold_result.run_id", "fold_result.series_version_id", "fold_result.candidate_id",
         "fold_result.fold"]
_FORECAST = ["forecast.run_id", "forecast.series_version_id", "forecast.candidate_id",
             "forecast.fold", "forecast.horizon"]


class ResultCandidate(Base):
    """A candidate as used on one series in one run (its label depends on the series)."""

    __tablename__ = "result_candidate"
    __table_args__ = (
        ForeignKeyConstraint(["run_id", "series_version_id"], _UNIT),
        NO_ROWID,
    )

    run_id: Mapped[PartKey]
    series_version_id: Mapped[PartKey]
    candidate_id: Mapped[CandidateId] = mapped_column(ForeignKey("candidate.id"),
                                                      primary_key=True)
    position: Mapped[int]
    label: Mapped[Name]
    added_as_benchmark: Mapped[bool]


class FoldRecord(Base):
    """One candidate at one origin: training window, outcome, parameters."""

    __tablename__ = "fold_result"
    __table_args__ = (
        ForeignKeyConstraint(["run_id", "series_version_id", "candidate_id"], _RESULT_CANDIDATE),
        _in("status", ("ok", "failed"), "status"),
        NO_ROWID,
    )

    run_id: Mapped[PartKey]
    series_version_id: Mapped[PartKey]
    candidate_id: Mapped[CandidateKey]
    fold: Mapped[PartKey]
    position: Mapped[int]
    origin: Mapped[Label]
    train_start: Mapped[Label]
    train_size: Mapped[int]
    reestimated: Mapped[bool]
    status: Mapped[Label]
    reason: Mapped[str | None] = mapped_column(Text)
    params: Mapped[Json | None]
    fit_summary: Mapped[Json | None]
    has_point: Mapped[bool]
    scale: Mapped[float | None]
    scale_sq: Mapped[float | None]
    converged: Mapped[bool | None] = mapped_column(info={ADDED_LATER: None})


class ForecastRecord(Base):
    """One horizon of one fold: target period, actual and point forecast."""

    __tablename__ = "forecast"
    __table_args__ = (
        ForeignKeyConstraint(["run_id", "series_version_id", "candidate_id", "fold"], _FOLD),
        NO_ROWID,
    )

    run_id: Mapped[PartKey]
    series_version_id: Mapped[PartKey]
    candidate_id: Mapped[CandidateKey]
    fold: Mapped[PartKey]
    horizon: Mapped[PartKey]
    origin: Mapped[Label]
    period: Mapped[Label]
    actual: Mapped[float]
    point: Mapped[float | None]


class ForecastBound(Base):
    """The prediction interval of one forecast at one level (in %)."""

    __tablename__ = "forecast_bound"
    __table_args__ = (
        ForeignKeyConstraint(["run_id", "series_version_id", "candidate_id", "fold", "horizon"],
                             _FORECAST),
        NO_ROWID,
    )

    run_id: Mapped[PartKey]
    series_version_id: Mapped[PartKey]
    candidate_id: Mapped[CandidateKey]
    fold: Mapped[PartKey]
    horizon: Mapped[PartKey]
    level: Mapped[PartKey]
    lower: Mapped[float | None]
    upper: Mapped[float | None]


class FoldWarning(Base):
    """A warning captured while fitting or forecasting one fold."""

    __tablename__ = "fold_warning"
    __table_args__ = (
        ForeignKeyConstraint(["run_id", "series_version_id", "candidate_id", "fold"], _FOLD),
        NO_ROWID,
    )

    run_id: Mapped[PartKey]
    series_version_id: Mapped[PartKey]
    candidate_id: Mapped[CandidateKey]
    fold: Mapped[PartKey]
    position: Mapped[PartKey]
    message: Mapped[str] = mapped_column(Text)


class ScoreRecord(Base):
    """One score of one candidate on one series: per horizon, or pooled (``horizon`` NULL)."""

    __tablename__ = "score"
    __table_args__ = (
        ForeignKeyConstraint(["run_id", "series_version_id", "candidate_id"], _RESULT_CANDIDATE),
        Index(None, "series_version_id", "candidate_id", "metric"),
        # rankings read one score (metric, horizon, level) of every candidate of a unit
        Index(None, "run_id", "series_version_id", "metric", "horizon", "level"),
        NO_ROWID,
    )

    run_id: Mapped[PartKey]
    series_version_id: Mapped[PartKey]
    position: Mapped[PartKey]
    candidate_id: Mapped[CandidateId]
    metric: Mapped[Label]
    level: Mapped[int | None]
    horizon: Mapped[int | None]
    value: Mapped[float | None]
    count: Mapped[int]
    note: Mapped[str | None] = mapped_column(Text)
    # the score over the origins every candidate with a defined value completed
    # (backtest.ranking.on_common_ground); NULL on rows written before migration 0009_h14
    common_value: Mapped[float | None] = mapped_column(info={ADDED_LATER: None})
    common_count: Mapped[int | None] = mapped_column(info={ADDED_LATER: None})
    common_note: Mapped[str | None] = mapped_column(Text, info={ADDED_LATER: None})
    common_folds: Mapped[int | None] = mapped_column(info={ADDED_LATER: None})


class RankRecord(Base):
    """A candidate's place in a series' ranking as the engine computed it."""

    __tablename__ = "rank_row"
    __table_args__ = (
        ForeignKeyConstraint(["run_id", "series_version_id", "candidate_id"], _RESULT_CANDIDATE),
        NO_ROWID,
    )

    run_id: Mapped[PartKey]
    series_version_id: Mapped[PartKey]
    position: Mapped[PartKey]
    candidate_id: Mapped[CandidateId]
    rank: Mapped[int | None]
    label: Mapped[Name]
    score: Mapped[float | None]
    ratio_to_benchmark: Mapped[float | None]
    is_benchmark: Mapped[bool]
    folds_ok: Mapped[int]
    folds_failed: Mapped[int]
    folds_not_converged: Mapped[int] = mapped_column(server_default="0",
                                                     info={ADDED_LATER: 0})
    in_confidence_set: Mapped[bool | None]
    beats_benchmark: Mapped[bool | None]
    calibration_zone: Mapped[Label | None]
    score_own_folds: Mapped[float | None] = mapped_column(info={ADDED_LATER: None})
    common_folds: Mapped[int | None] = mapped_column(info={ADDED_LATER: None})
    score_count: Mapped[int | None] = mapped_column(info={ADDED_LATER: None})
    score_possible: Mapped[int | None] = mapped_column(info={ADDED_LATER: None})


class AuditEvent(Base):
    """One entry of the append-only, hash-chained log of writes."""

    __tablename__ = "audit_event"
    # authentication looks up the audited digest of a key by subject and action
    __table_args__ = (Index(None, "subject", "action"),)

    seq: Mapped[int] = mapped_column(primary_key=True, autoincrement=False)
    occurred_at: Mapped[datetime] = mapped_column(index=True)
    actor: Mapped[Name]
    action: Mapped[Label]
    subject: Mapped[Name]
    digest: Mapped[Digest]
    prev_hash: Mapped[Digest] = mapped_column(unique=True)
    hash: Mapped[Digest] = mapped_column(unique=True)


class AuditVerification(Base):
    """A verification of the audit log that passed: the head it reached, for the next one
    to continue from. Operational state, not audited; ``mac`` (under ``FOLDLINE_AUDIT_KEY``
    when set) lets the next verification trust it."""

    __tablename__ = "audit_verification"

    id: Mapped[int] = mapped_column(primary_key=True)
    seq: Mapped[int]
    hash: Mapped[Digest]
    keyed_from: Mapped[int | None]
    started_at: Mapped[datetime]
    finished_at: Mapped[datetime]
    mode: Mapped[Label]
    events_checked: Mapped[int]
    mac: Mapped[Digest | None]


class ApiKey(Base):
    """An API key: its public id, the SHA-256 of its secret, its holder's name and role, and
    its scope: the series-key prefix its team owns (null: every series)."""

    __tablename__ = "api_key"
    __table_args__ = (_in("role", ROLES, "role"),)

    id: Mapped[Label] = mapped_column(primary_key=True)
    name: Mapped[Name] = mapped_column(unique=True)
    role: Mapped[Label]
    secret_hash: Mapped[Digest]
    created_at: Mapped[datetime]
    created_by: Mapped[Name]
    scope: Mapped[Name | None] = mapped_column(info={ADDED_LATER: None})


class ApiKeyRevocation(Base):
    """The revocation of an API key; a key with one is refused from then on."""

    __tablename__ = "api_key_revocation"

    key_id: Mapped[Label] = mapped_column(ForeignKey("api_key.id"), primary_key=True)
    revoked_at: Mapped[datetime]
    revoked_by: Mapped[Name]


class PageSignOut(Base):
    """A reviewer page session ended by signing out (the SHA-256 of its cookie value): the
    cookie is refused from then on, even where a copy of it survives."""

    __tablename__ = "page_sign_out"

    session_digest: Mapped[Digest] = mapped_column(primary_key=True)
    key_id: Mapped[Label] = mapped_column(ForeignKey("api_key.id"))
    signed_out_at: Mapped[datetime]


class ChampionChoiceRecord(Base):
    """A candidate chosen as a series' champion: by whom, when, why, on which run's evidence.

    The series' champion is its latest choice; earlier rows are the history of changes.
    """

    __tablename__ = "champion_choice"
    __table_args__ = (Index(None, "series_id", "id"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    series_id: Mapped[int] = mapped_column(ForeignKey("series.id"))
    candidate_id: Mapped[CandidateId] = mapped_column(ForeignKey("candidate.id"))
    run_id: Mapped[int | None] = mapped_column(ForeignKey("run.id"))
    reason: Mapped[str] = mapped_column(Text)
    chosen_by: Mapped[Name]
    chosen_at: Mapped[datetime]


class IssuedForecastRecord(Base):
    """An issued forecast: what produced it and who issued it; its horizons are rows of
    ``issued_point`` and ``issued_bound``.

    ``levels`` is the comma-separated level list as issued, part of the inputs that make a
    re-issue return this record; ``params`` holds non-finite numbers as ``"nan"``/``"inf"``.
    """

    __tablename__ = "issued_forecast"
    __table_args__ = (
        UniqueConstraint("series_version_id", "candidate_id", "horizon", "levels", "seed",
                         name="uq_issued_forecast_inputs"),
        Index(None, "series_id", "candidate_id"),
        Index(None, "candidate_id"),
        Index(None, "issued_at"),
    )

    id: Mapped[int] = mapped_column(primary_key=True)
    series_id: Mapped[int] = mapped_column(ForeignKey("series.id"))
    series_version_id: Mapped[int] = mapped_column(ForeignKey("series_version.id"))
    candidate_id: Mapped[CandidateId] = mapped_column(ForeignKey("candidate.id"))
    label: Mapped[Name]
    horizon: Mapped[int]
    levels: Mapped[Name]
    seed: Mapped[int]
    origin: Mapped[Label]
    params: Mapped[Json]
    scale: Mapped[float | None]
    scale_sq: Mapped[float | None]
    software: Mapped[Json]
    warnings: Mapped[Json]
    issued_by: Mapped[Name]
    issued_at: Mapped[datetime]


IssuedKey = Annotated[int, mapped_column(ForeignKey("issued_forecast.id"), primary_key=True)]


class IssuedPoint(Base):
    """One horizon of an issued forecast: target period and point forecast."""

    __tablename__ = "issued_point"
    __table_args__ = NO_ROWID

    forecast_id: Mapped[IssuedKey]
    horizon: Mapped[PartKey]
    period: Mapped[Label]
    point: Mapped[float | None]


class IssuedBound(Base):
    """The prediction interval of one horizon of an issued forecast at one level (in %)."""

    __tablename__ = "issued_bound"
    __table_args__ = (
        ForeignKeyConstraint(["forecast_id", "horizon"],
                             ["issued_point.forecast_id", "issued_point.horizon"]),
        NO_ROWID,
    )

    forecast_id: Mapped[PartKey]
    horizon: Mapped[PartKey]
    level: Mapped[PartKey]
    lower: Mapped[float | None]
    upper: Mapped[float | None]


class OutcomeSetRecord(Base):
    """An issued forecast scored against one series version; at most one per pair."""

    __tablename__ = "outcome_set"
    __table_args__ = NO_ROWID

    forecast_id: Mapped[IssuedKey]
    series_version_id: Mapped[VersionKey]
    scored_at: Mapped[datetime]
    scored_by: Mapped[Name]


_OUTCOME_SET = ["outcome_set.forecast_id", "outcome_set.series_version_id"]
_OUTCOME = ["outcome.forecast_id", "outcome.series_version_id", "outcome.horizon"]


class OutcomeRecord(Base):
    """The realised error of one horizon of an issued forecast against one version."""

    __tablename__ = "outcome"
    __table_args__ = (
        ForeignKeyConstraint(["forecast_id", "series_version_id"], _OUTCOME_SET),
        ForeignKeyConstraint(["forecast_id", "horizon"],
                             ["issued_point.forecast_id", "issued_point.horizon"]),
        NO_ROWID,
    )

    forecast_id: Mapped[PartKey]
    series_version_id: Mapped[PartKey]
    horizon: Mapped[PartKey]
    period: Mapped[Label]
    actual: Mapped[float | None]
    point: Mapped[float | None]
    error: Mapped[float | None]
    scaled_error: Mapped[float | None]
    smape_term: Mapped[float | None]


class OutcomeLevel(Base):
    """Whether one horizon's actual fell inside the interval at one level, and its score."""

    __tablename__ = "outcome_level"
    __table_args__ = (
        ForeignKeyConstraint(["forecast_id", "series_version_id", "horizon"], _OUTCOME),
        ForeignKeyConstraint(["forecast_id", "horizon", "level"],
                             ["issued_bound.forecast_id", "issued_bound.horizon",
                              "issued_bound.level"]),
        NO_ROWID,
    )

    forecast_id: Mapped[PartKey]
    series_version_id: Mapped[PartKey]
    horizon: Mapped[PartKey]
    level: Mapped[PartKey]
    hit: Mapped[bool]
    interval_score: Mapped[float | None]
