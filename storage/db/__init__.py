"""storage.db."""
