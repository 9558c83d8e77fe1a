"""storage.audit.log."""
