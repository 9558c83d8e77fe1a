"""service.worker.loop."""
