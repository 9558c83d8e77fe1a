"""The HTTP API's routers, one module per resource; :mod:`service.http.app` includes them."""
