"""Versions of the software that computes a result, recorded with every run."""

from __future__ import annotations

import platform
from importlib import metadata

_PACKAGES = ("numpy", "scipy", "pandas", "statsmodels", "joblib", "arch")


def software_versions() -> dict[str, str]:
    """Python, the numerical packages and Foldline itself, as ``name -> version``."""
    versions = {"python": platform.python_version()}
    for name in (*_PACKAGES, "foldline"):
        try:
            versions[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            versions[name] = "not installed"
    return versions
