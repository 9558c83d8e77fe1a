"""service.views."""
