"""The interactive API documentation at ``/docs``, served entirely from the installation.

Swagger UI's script and style (version 5, which reads the OpenAPI 3.1 document FastAPI
writes) come from the ``fastapi-offline`` package, which ships them as files; only those
files are used, mounted at :data:`ASSETS`. No page of Foldline loads anything from another
host, so ``/docs`` works without internet access.
"""

from __future__ import annotations

from pathlib import Path

import fastapi_offline
from fastapi import FastAPI
from fastapi.openapi.docs import get_swagger_ui_html
from fastapi.responses import HTMLResponse
from fastapi.staticfiles import StaticFiles

#: Swagger UI's files inside the installed package.
SWAGGER_UI_FILES = Path(fastapi_offline.__file__).parent / "static"
DOCS = "/docs"
ASSETS = "/docs-assets"


def add_api_docs(app: FastAPI) -> None:
    """Serve ``/docs`` and its assets; ``app`` must be made with ``docs_url=None``."""
    app.mount(ASSETS, StaticFiles(directory=SWAGGER_UI_FILES), name="docs-assets")

    @app.get(DOCS, include_in_schema=False)
    def api_docs() -> HTMLResponse:
        return get_swagger_ui_html(openapi_url=app.openapi_url or "/openapi.json",
                                   title=f"{app.title}: API documentation",
                                   swagger_js_url=f"{ASSETS}/swagger-ui-bundle.js",
                                   swagger_css_url=f"{ASSETS}/swagger-ui.css",
                                   swagger_favicon_url=f"{ASSETS}/favicon.png")
