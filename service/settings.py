"""Every setting of the service, read from environment variables prefixed ``FOLDLINE_``.

This is the one place settings are defined; deploy/SETTINGS.md lists them for operators and
a test keeps the two in step. Nothing is read at import: :func:`get_settings` builds the
settings once per process, and ``create_app(settings)`` and the worker take them as an
argument.
"""

from __future__ import annotations

from functools import lru_cache

from pydantic import Field, ValidationError
from pydantic_settings import BaseSettings, SettingsConfigDict

from storage.db import database_url


class Settings(BaseSettings):
    """Service settings; each field is ``FOLDLINE_<NAME>`` in the environment."""

    model_config = SettingsConfigDict(env_prefix="FOLDLINE_", extra="ignore")

    database_url: str = Field(default_factory=database_url,
                              description="SQLAlchemy URL of the store (default: SQLite file)")
    host: str = Field("127.0.0.1", description="address the API server listens on")
    port: int = Field(8000, ge=0, le=65535, description="port the API server listens on")
    embedded_worker: bool = Field(True, description="`foldline serve` also runs a worker")
    worker_jobs: int = Field(2, ge=1, le=64, description="joblib processes per worker")
    dask_scheduler: str | None = Field(None, description="dask scheduler address; when set, "
                                       "workers send a run's tasks to that cluster")
    lease_seconds: float = Field(60.0, gt=1, description="how long a claimed run stays "
                                 "leased without renewal before another worker may take it")
    poll_seconds: float = Field(1.0, gt=0, description="how often an idle worker looks for "
                                "queued runs")
    max_body_bytes: int = Field(10 * 1024 * 1024, ge=1024, description="largest request body")
    max_observations: int = Field(10_000, ge=10, description="observations per series")
    max_series_per_upload: int = Field(1_000, ge=1, description="series in one upload")
    max_candidates: int = Field(20, ge=1, description="candidates per run")
    max_folds: int = Field(500_000, ge=1, description="folds (series x candidates x origins) "
                           "per run")
    max_run_fits: int = Field(200_000, ge=1, description="model fits a run may take, by the "
                              "estimate made at submission (order searches count each order "
                              "they may try)")
    max_run_rows: int = Field(5_000_000, ge=1, description="result rows a run may write, by the "
                              "estimate made at submission (forecasts, interval bounds, scores)")
    max_horizon: int = Field(500, ge=1, description="steps ahead of a run's plan or an issued "
                             "forecast")
    max_levels: int = Field(10, ge=1, description="interval levels of a run's plan or an issued "
                            "forecast")
    report_cache_dir: str | None = Field(None, description="directory of rendered run reports "
                                         "(default: `reports` beside the SQLite store, else "
                                         "in the default data directory)")
    prerender_reports: bool = Field(True, description="a worker renders each run it finishes "
                                    "successfully into the report cache; false where workers "
                                    "do not share the API's report directory")
    session_secret: str | None = Field(None, repr=False, description="key that signs reviewer "
                                       "page sessions; unset: a random one per process, so "
                                       "sessions end when the server restarts")
    audit_key: str | None = Field(None, repr=False, min_length=16, description="secret that "
                                  "signs audit checkpoints (`foldline audit checkpoint`); keep "
                                  "it outside the database")
    session_minutes: int = Field(480, ge=1, le=10_080, description="how long a reviewer page "
                                 "session lasts after signing in")


@lru_cache(maxsize=1)
def get_settings() -> Settings:
    """The process's settings, read from the environment once."""
    return Settings()


class InvalidSettingsError(Exception):
    """One or more FOLDLINE_* variables are invalid; the message names each with the reason."""


def checked_settings() -> Settings:
    """:func:`get_settings`, raising :class:`InvalidSettingsError` with a one-line message."""
    try:
        return get_settings()
    except ValidationError as exc:
        problems = "; ".join(f"FOLDLINE_{'_'.join(map(str, e['loc'])).upper()}: {e['msg']}"
                             for e in exc.errors())
        raise InvalidSettingsError(f"invalid settings: {problems}") from None
