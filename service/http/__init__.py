"""service.http."""
