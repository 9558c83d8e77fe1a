"""storage.runs.lifecycle."""
