"""The HTTP API: ``create_app(settings)`` builds the application and everything it holds.

Nothing is built at import. The engine is made from ``settings.database_url`` and disposed
when the application shuts down; the request-body limit is ``settings.max_body_bytes``
(:mod:`service.http.body_limit`).
Runs are only queued here, never computed: workers do that.
"""

from __future__ import annotations

from collections.abc import AsyncIterator
from contextlib import asynccontextmanager
from typing import Any

from fastapi import Depends, FastAPI
from fastapi.exceptions import RequestValidationError
from fastapi.openapi.utils import get_openapi
from starlette.exceptions import HTTPException

from backtest.errors import BacktestError
from service.errors import ServiceError
from service.http.api_docs import add_api_docs
from service.http.body_limit import BodyLimitMiddleware
from service.http.problems import MEDIA_TYPE, problem_response
from service.http.prometheus import MetricsMiddleware, RequestMetrics
from service.http.query_check import reject_unknown_query
from service.http.ranking_cache import RankingCache
from service.http.request_guard import NulGuardMiddleware
from service.http.routes import (
    champions,
    dossier,
    forecasts,
    history,
    keys,
    monitoring,
    operations,
    pages,
    rankings,
    reports,
    results,
    runs,
    series,
)
from service.settings import Settings, get_settings
from service.usecases.audit_verification import Verifier
from service.usecases.store import store_sessions
from storage.errors import StorageError

DESCRIPTION = """Forecast backtesting and model audit.

Authenticate with an API key: `Authorization: Bearer fl_<key id>.<secret>`. Errors are
RFC 9457 problem details (`application/problem+json`). Tables are JSON, or CSV with
`Accept: text/csv` or `?format=csv`; lists are paged with `limit` and `offset` and name the
next page in `next` and a `Link` header.
"""
# champions, monitoring and dossier first: their /series/{key}/... paths would otherwise be
# read as series keys by GET /series/{key}
ROUTERS = tuple(module.router for module in (champions, monitoring, dossier, series, runs,
                                            results, reports, rankings, history, keys,
                                            operations, forecasts))
ERROR_FAMILIES = (BacktestError, StorageError, ServiceError, RequestValidationError,
                  HTTPException, Exception)


def create_app(settings: Settings | None = None) -> FastAPI:
    """The API application for ``settings`` (default: from the environment)."""
    settings = settings or get_settings()
    sessions, close_store = store_sessions(settings.database_url, settings.audit_key)

    @asynccontextmanager
    async def lifespan(_app: FastAPI) -> AsyncIterator[None]:
        yield
        close_store()

    app = FastAPI(title="Foldline", version="1", description=DESCRIPTION, lifespan=lifespan,
                  docs_url=None, redoc_url=None)
    add_api_docs(app)
    app.state.settings = settings
    app.state.sessions = sessions
    app.state.verifier = Verifier(sessions)
    app.state.request_metrics = RequestMetrics()
    app.state.ranking_cache = RankingCache()
    for router in ROUTERS:
        app.include_router(router, dependencies=[Depends(reject_unknown_query)])
    app.include_router(pages.router)  # HTML for reviewers, not part of the API
    for family in ERROR_FAMILIES:
        app.add_exception_handler(family, problem_response)
    app.add_middleware(BodyLimitMiddleware, max_bytes=settings.max_body_bytes)
    app.add_middleware(NulGuardMiddleware)
    app.add_middleware(MetricsMiddleware, metrics=app.state.request_metrics)
    app.openapi = lambda: _openapi(app)  # type: ignore[method-assign]  # FastAPI's documented way to customise the document
    return app


def _openapi(app: FastAPI) -> dict[str, Any]:
    if app.openapi_schema is None:
        document = get_openapi(title=app.title, version=app.version,
                               description=app.description, routes=app.routes)
        for operation in (op for path in document["paths"].values() for op in path.values()):
            for status, answer in operation.get("responses", {}).items():
                if int(status) >= 400 and answer.get("content"):
                    problem = next(iter(answer["content"].values()))["schema"]
                    answer["content"] = {MEDIA_TYPE: {"schema": problem}}
        app.openapi_schema = document
    return app.openapi_schema
