"""storage.results."""
