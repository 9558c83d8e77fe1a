"""The database itself: engines and sessions, migrations, the table definitions, column
types, the write lock, bulk inserts, the append-only guard, the store's status and the
read-only views for BI tools.
"""

from storage.db.bi_views import BI_VIEWS, grant_bi_reader
from storage.db.bulk import insert_rows
from storage.db.engine import URL_SETTING, database_url, default_sqlite_path, make_engine, session_factory
from storage.db.migrate import upgrade
from storage.db.schema import ApiKey, ApiKeyRevocation, AuditEvent, Base, CandidateRecord, ChampionChoiceRecord, FINAL_STATUSES, FoldRecord, FoldWarning, ForecastBound, ForecastRecord, IssuedBound, IssuedForecastRecord, IssuedPoint, Observation, OutcomeLevel, OutcomeRecord, OutcomeSetRecord, PageSignOut, PlanRecord, ROLES, RankRecord, ResultCandidate, Run, RunCandidate, RunSeries, ScoreRecord, SeriesRecord, SeriesResultRecord, SeriesVersion
from storage.db.status import folds_computed, head_revision, run_counts, schema_revision
from storage.db.types import ADDED_LATER, UtcDateTime, utc_now
from storage.db.write_lock import take_write_lock

__all__ = [
    "ADDED_LATER",
    "ApiKey",
    "ApiKeyRevocation",
    "AuditEvent",
    "BI_VIEWS",
    "Base",
    "CandidateRecord",
    "ChampionChoiceRecord",
    "FINAL_STATUSES",
    "FoldRecord",
    "FoldWarning",
    "ForecastBound",
    "ForecastRecord",
    "IssuedBound",
    "IssuedForecastRecord",
    "IssuedPoint",
    "Observation",
    "OutcomeLevel",
    "OutcomeRecord",
    "OutcomeSetRecord",
    "PageSignOut",
    "PlanRecord",
    "ROLES",
    "RankRecord",
    "ResultCandidate",
    "Run",
    "RunCandidate",
    "RunSeries",
    "ScoreRecord",
    "SeriesRecord",
    "SeriesResultRecord",
    "SeriesVersion",
    "URL_SETTING",
    "UtcDateTime",
    "database_url",
    "default_sqlite_path",
    "folds_computed",
    "grant_bi_reader",
    "head_revision",
    "insert_rows",
    "make_engine",
    "run_counts",
    "schema_revision",
    "session_factory",
    "take_write_lock",
    "upgrade",
    "utc_now",
]
