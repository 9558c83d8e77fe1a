"""Finding runs and what they used: by idempotency key, and the series versions of a run."""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from storage.errors import translates_errors
from storage.runs import RunInfo, get_run
from storage.schema import Run, RunSeries, SeriesRecord, SeriesVersion
from storage.series_catalog import version_info
from storage.series_store import VersionInfo


@translates_errors
def run_with_idempotency_key(session: Session, key: str) -> RunInfo | None:
    """The run queued with this idempotency key, if any."""
    run_id = session.scalar(select(Run.id).where(Run.idempotency_key == key))
    return None if run_id is None else get_run(session, run_id)


@translates_errors
def run_versions(session: Session, run_id: int) -> list[VersionInfo]:
    """The series versions a run asked for, in request order."""
    rows = session.execute(
        select(SeriesVersion, SeriesRecord.key)
        .join(RunSeries, RunSeries.series_version_id == SeriesVersion.id)
        .join(SeriesRecord, SeriesRecord.id == SeriesVersion.series_id)
        .where(RunSeries.run_id == run_id).order_by(RunSeries.position))
    return [version_info(version, key) for version, key in rows]
