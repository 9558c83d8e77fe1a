"""The interactive API documentation at ``/docs``, served entirely from the installation.

Swagger UI's script and style come from the ``swagger-ui-bundle`` package (a packaged copy
of the Swagger UI distribution), mounted at :data:`ASSETS`: no page of Foldline loads
anything from another host, so ``/docs`` works without internet access.
"""

from __future__ import annotations

from fastapi import FastAPI
from fastapi.openapi.docs import get_swagger_ui_html
from fastapi.responses import HTMLResponse
from fastapi.staticfiles import StaticFiles
from swagger_ui_bundle import swagger_ui_path

DOCS = "/docs"
ASSETS = "/docs-assets"


def add_api_docs(app: FastAPI) -> None:
    """Serve ``/docs`` and its assets; ``app`` must be made with ``docs_url=None``."""
    app.mount(ASSETS, StaticFiles(directory=swagger_ui_path), name="docs-assets")

    @app.get(DOCS, include_in_schema=False)
    def api_docs() -> HTMLResponse:
        return get_swagger_ui_html(openapi_url=app.openapi_url or "/openapi.json",
                                   title=f"{app.title}: API documentation",
                                   swagger_js_url=f"{ASSETS}/swagger-ui-bundle.js",
                                   swagger_css_url=f"{ASSETS}/swagger-ui.css",
                                   swagger_favicon_url=f"{ASSETS}/favicon-32x32.png")
