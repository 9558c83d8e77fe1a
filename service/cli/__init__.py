"""service.cli.main."""
