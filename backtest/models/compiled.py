"""numba compilation with an on-disk cache in a writable place.

Compiled functions are cached by numba (``cache=True``) under ``NUMBA_CACHE_DIR``; when
that is not set it defaults to ``foldline/numba`` in the user's cache directory
(``$XDG_CACHE_HOME``, else ``~/.cache``), so a read-only installation still keeps its
machine code between processes. The first process compiles (a few seconds), later ones
load the cache; :func:`backtest.warm_up.warm_up` does it at worker start for every
compiled function the engine uses.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from pathlib import Path
from typing import Any, TypeVar, cast

F = TypeVar("F", bound=Callable[..., Any])


def cache_dir() -> Path:
    """Where compiled functions are cached."""
    chosen = os.environ.get("NUMBA_CACHE_DIR")
    if chosen:
        return Path(chosen)
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "foldline" / "numba"


os.environ.setdefault("NUMBA_CACHE_DIR", str(cache_dir()))

import numba  # noqa: E402 - numba reads NUMBA_CACHE_DIR when imported

_config: Any = numba.config  # numba sets its configuration names at run time
if not _config.CACHE_DIR:  # numba was imported before this module
    _config.CACHE_DIR = str(cache_dir())


def njit(function: F) -> F:
    """Compile ``function`` in nopython mode, cached on disk."""
    return cast(F, numba.njit(cache=True, nogil=True)(function))  # a dispatcher calls alike


def njit_ieee_division(function: F) -> F:
    """:func:`njit` with IEEE division (numba's ``error_model="numpy"``): a division by zero
    gives an infinity or NaN instead of raising, so a loop needs no test before each
    division and can compile to vector instructions."""
    return cast(F, numba.njit(cache=True, nogil=True, error_model="numpy")(function))
