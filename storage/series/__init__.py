"""storage.series."""
