"""The HTTP API's routers, one module per resource; :mod:`service.app` includes them."""
