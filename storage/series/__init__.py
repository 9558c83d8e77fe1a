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
from storage.series.versions import (
    SaveOutcome,
    VersionInfo,
    get_version,
    list_versions,
    load_series,
    save_series_version,
)

__all__ = [
    "SaveOutcome",
    "SeriesInfo",
    "VersionInfo",
    "find_series",
    "get_series",
    "get_version",
    "list_versions",
    "load_series",
    "save_series_version",
    "version_by_number",
    "version_info",
]
