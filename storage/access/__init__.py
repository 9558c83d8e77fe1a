"""storage.access."""
