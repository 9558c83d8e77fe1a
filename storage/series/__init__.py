"""Series and their immutable versions: storing them (fingerprint, observations, tags) and
finding them by key, prefix and tags.
"""

from storage.series.catalog import (
    SeriesInfo,
    find_series,
    get_series,
    version_by_number,
    version_info,
)
from storage.series.skeleton import skeleton
from storage.series.versions import (
    SaveOutcome,
    VersionInfo,
    filled_periods,
    get_version,
    list_versions,
    load_series,
    save_series_version,
)

__all__ = [
    "SaveOutcome",
    "SeriesInfo",
    "VersionInfo",
    "filled_periods",
    "find_series",
    "get_series",
    "get_version",
    "list_versions",
    "load_series",
    "save_series_version",
    "skeleton",
    "version_by_number",
    "version_info",
]
