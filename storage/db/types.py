"""Column types shared by every table: UTC timestamps and portable JSON, and the marker of
columns added after rows were first written."""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Any

from sqlalchemy import JSON, DateTime, Dialect
from sqlalchemy.dialects.postgresql import JSONB
from sqlalchemy.types import TypeDecorator

#: ``Column.info`` key of a column added after rows were first written, holding the value
#: older rows read back: a row's digest leaves the column out while it holds that value, so
#: digests recorded before the column existed still verify.
ADDED_LATER = "digest_omits"

JsonType = JSON(none_as_null=True).with_variant(JSONB(none_as_null=True), "postgresql")


class UtcDateTime(TypeDecorator[datetime]):
    """A timezone-aware UTC timestamp on every backend.

    SQLite keeps no zone, so values are stored as naive UTC and given the UTC zone on the
    way back; PostgreSQL stores ``timestamptz``. Naive datetimes are refused on write.
    """

    impl = DateTime(timezone=True)
    cache_ok = True

    def process_bind_param(self, value: datetime | None, dialect: Dialect) -> Any:
        if value is None:
            return None
        if value.tzinfo is None:
            raise ValueError(f"naive datetime {value!r}: storage needs timezone-aware times")
        value = value.astimezone(UTC)
        return value.replace(tzinfo=None) if dialect.name == "sqlite" else value

    def process_result_value(self, value: datetime | None, dialect: Dialect) -> datetime | None:
        if value is None:
            return None
        if value.tzinfo is None:
            return value.replace(tzinfo=UTC)
        return value.astimezone(UTC)


def utc_now() -> datetime:
    """The current time in UTC."""
    return datetime.now(UTC)
