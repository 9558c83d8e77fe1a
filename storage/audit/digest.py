"""Content digests: SHA-256 over stored rows, computed alike from written and re-read rows.

A table's digest hashes the ``repr`` of the list of row tuples (values in column order),
sorted by primary key so that the order rows come back in does not matter. Values are
normalised first so that both backends give the same text: timestamps become UTC ISO 8601,
and JSON documents become canonical JSON text with every number written as a float
(PostgreSQL's JSONB may print ``1e+20`` back as an integer). Writers must therefore pass
floats for float columns and ints for integer columns.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Callable, Iterable, Mapping, Sequence
from datetime import UTC, datetime
from operator import itemgetter
from typing import Any

from sqlalchemy import JSON, Column, Table

from storage.db import ADDED_LATER, UtcDateTime

# Keyed by column name. The key type is Any because SQLAlchemy's RowMapping (also keyed by
# column objects) is not a Mapping[str, Any]: Mapping is invariant in its key type.
Row = Mapping[Any, Any]


def sha256_text(text: str) -> str:
    """Hex SHA-256 of UTF-8 text."""
    return hashlib.sha256(text.encode()).hexdigest()


def canonical_json(value: Any) -> str:
    """Sorted keys, no spaces; the form plan ids and candidate ids are hashed from."""
    return json.dumps(value, sort_keys=True, separators=(",", ":"), allow_nan=False)


def table_digest(table: Table, rows: Iterable[Row],
                 columns: Sequence[str] | None = None) -> str:
    """Digest of ``rows`` of ``table`` over ``columns`` (default: all, in table order).

    ``columns`` must include the primary key, which orders the rows.
    """
    names = list(columns or table.columns.keys())
    key = itemgetter(*(names.index(column.name) for column in table.primary_key))
    ordered = sorted(map(_tuple_maker(table, names), rows), key=key)
    added = [(i, table.columns[n].info[ADDED_LATER]) for i, n in enumerate(names)
             if ADDED_LATER in table.columns[n].info]
    if added:
        ordered = [_without_defaults(row, added) for row in ordered]
    return sha256_text(f"{table.name}\n{ordered!r}")


def combine(digests: Iterable[str]) -> str:
    """One digest for several parts, in the given order."""
    return sha256_text("\n".join(digests))


def _without_defaults(row: tuple[Any, ...], added: list[tuple[int, Any]]) -> tuple[Any, ...]:
    """``row`` without the values of columns added later that still hold the default they
    were added with, so that older digests still verify; checks only those columns."""
    drop = [i for i, default in added if row[i] == default]
    if not drop:
        return row
    return tuple(v for i, v in enumerate(row) if i not in drop)


def _tuple_maker(table: Table, names: list[str]) -> Callable[[Row], tuple[Any, ...]]:
    converters = [(i, conv) for i, n in enumerate(names)
                  if (conv := _converter(table.columns[n])) is not None]
    pick = itemgetter(*names)
    if len(names) == 1:
        return lambda row: (pick(row),)
    if not converters:
        return pick

    def converted(row: Row) -> tuple[Any, ...]:
        values = list(pick(row))
        for i, conv in converters:
            if values[i] is not None:
                values[i] = conv(values[i])
        return tuple(values)

    return converted


def _converter(column: Column[Any]) -> Callable[[Any], Any] | None:
    if isinstance(column.type, UtcDateTime):
        return _timestamp
    if isinstance(column.type, JSON):
        return _json_text
    return None


def _timestamp(value: datetime) -> str:
    return value.astimezone(UTC).isoformat()


def _json_text(value: Any) -> str:
    return json.dumps(_numbers_as_floats(value), sort_keys=True, separators=(",", ":"))


#: Leaf types returned as they are (checked by exact type first: the common, cheap case).
_KEPT = frozenset({float, str, bool, type(None)})


def _numbers_as_floats(value: Any) -> Any:
    if type(value) in _KEPT:
        return value
    if isinstance(value, dict):
        return {k: v if type(v) in _KEPT else _numbers_as_floats(v) for k, v in value.items()}
    if isinstance(value, list):
        return [v if type(v) in _KEPT else _numbers_as_floats(v) for v in value]
    if isinstance(value, int) and not isinstance(value, bool):
        return float(value)
    return value
