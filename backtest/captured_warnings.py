"""Library warnings captured while a computation runs, kept as ``Category: message`` lines."""

from __future__ import annotations

import warnings
from collections.abc import Iterable, Iterator
from contextlib import contextmanager


@contextmanager
def capturing_warnings() -> Iterator[list[warnings.WarningMessage]]:
    """Record every warning raised inside the block, each occurrence, none shown."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        yield caught


def warning_line(caught: warnings.WarningMessage) -> str:
    """``Category: message`` for one recorded warning."""
    return f"{caught.category.__name__}: {caught.message}"


def distinct_warning_lines(caught: Iterable[warnings.WarningMessage]) -> tuple[str, ...]:
    """:func:`warning_line` of each recorded warning, duplicates removed in order."""
    return tuple(dict.fromkeys(warning_line(w) for w in caught))
