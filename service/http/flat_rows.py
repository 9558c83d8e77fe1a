"""Answers with nested members as flat CSV rows: a nested object's members become columns
named ``member_submember``; lists and mappings become one cell of compact JSON."""

from __future__ import annotations

import json
from collections.abc import Iterable, Iterator
from datetime import datetime
from typing import Any, get_args

from pydantic import BaseModel


def flat_columns(model: type[BaseModel], prefix: str = "") -> tuple[str, ...]:
    """The CSV columns of ``model``'s flat rows, in field order."""
    names: list[str] = []
    for name, field in model.model_fields.items():
        nested = _model_of(field.annotation)
        names += flat_columns(nested, f"{prefix}{name}_") if nested else [f"{prefix}{name}"]
    return tuple(names)


def flat_rows(items: Iterable[BaseModel]) -> Iterator[dict[str, Any]]:
    """Each item as one flat row."""
    for item in items:
        yield _flat(item, "")


def _flat(item: BaseModel, prefix: str) -> dict[str, Any]:
    row: dict[str, Any] = {}
    for name in type(item).model_fields:
        value = getattr(item, name)
        if isinstance(value, BaseModel):
            row.update(_flat(value, f"{prefix}{name}_"))
        elif isinstance(value, list | dict):
            row[f"{prefix}{name}"] = json.dumps(_plain(value), separators=(",", ":"),
                                                 ensure_ascii=False)
        else:
            row[f"{prefix}{name}"] = value
    return row


def _plain(value: Any) -> Any:
    if isinstance(value, BaseModel):
        return value.model_dump(mode="json")
    if isinstance(value, list):
        return [_plain(v) for v in value]
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    return value.isoformat() if isinstance(value, datetime) else value


def _model_of(annotation: Any) -> type[BaseModel] | None:
    """The model a field holds (also inside ``X | None``), if any."""
    for candidate in (annotation, *get_args(annotation)):
        if isinstance(candidate, type) and issubclass(candidate, BaseModel):
            return candidate
    return None
