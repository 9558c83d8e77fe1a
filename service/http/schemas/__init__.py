"""Request and response bodies of the HTTP API, one module per resource."""
