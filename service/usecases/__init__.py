"""service.usecases."""
