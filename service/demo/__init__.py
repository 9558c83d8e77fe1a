"""service.demo.run."""
