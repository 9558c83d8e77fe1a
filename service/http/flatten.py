"""Nested JSON documents as (dotted path, scalar) pairs, for long-format CSV."""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any


def flatten(value: Any, path: str = "") -> Iterator[tuple[str, Any]]:
    """Every scalar inside ``value`` with its path (``a.b.0.c``); empty containers vanish."""
    if isinstance(value, dict):
        for key, item in value.items():
            yield from flatten(item, f"{path}.{key}" if path else str(key))
    elif isinstance(value, list):
        for index, item in enumerate(value):
            yield from flatten(item, f"{path}.{index}" if path else str(index))
    else:
        yield path, value
