"""The API against a real, freshly migrated store, with a key for every role.

``api`` runs on SQLite; ``any_api`` runs each test on SQLite and on PostgreSQL (for the
queries whose SQL differs between them). Each test gets a store of its own, a copy of a
migrated template, since the API commits; module fixtures that only read share one. Runs
are completed the way a worker does it: the engine computes them and the storage functions
write each series' results.
"""

from __future__ import annotations

import shutil
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session, sessionmaker

from backtest.candidates import parse_candidate
from backtest.engine import run_backtest
from backtest.results import BacktestResult, SeriesResult
from backtest.series import Series
from service.http.app import create_app
from service.settings import Settings
from service.usecases.keys import issue_key
from service.worker.queued_specs import stored_plan
from storage.db import ROLES, make_engine, session_factory
from storage.results import write_series_result
from storage.runs import finish_run, record_progress, run_request, start_run
from storage.series import load_series
from tests.storage.conftest import BACKENDS, migrated_store

if TYPE_CHECKING:
    import httpx2 as httpx  # the client starlette's TestClient uses

WORKER = "worker-test"
CANDIDATES = [{"family": "benchmark", "method": "naive"},
              {"family": "benchmark", "method": "drift"}]
PLAN = {"horizon": 3, "max_origins": 4}


@dataclass
class Api:
    """A client of the app, sessions on its store, and a key per role."""

    app: FastAPI
    client: TestClient
    sessions: sessionmaker[Session]
    url: str
    tokens: dict[str, str] = field(default_factory=dict)

    def headers(self, role: str | None, **extra: str) -> dict[str, str]:
        auth = {"Authorization": f"Bearer {self.tokens[role]}"} if role else {}
        return {**auth, **extra}

    def request(self, role: str | None, method: str, url: str,
                **options: Any) -> httpx.Response:
        headers = self.headers(role, **options.pop("headers", {}))
        return self.client.request(method, url, headers=headers, **options)

    def get(self, role: str | None, url: str, **options: Any) -> httpx.Response:
        return self.request(role, "GET", url, **options)

    def post(self, role: str | None, url: str, **options: Any) -> httpx.Response:
        return self.request(role, "POST", url, **options)

    def post_series(self, series: Series, **fields: Any) -> httpx.Response:
        """Post a series as JSON with the submitter's key."""
        return self.post("submitter", "/v1/series", json={**series_body(series), **fields})

    def submit(self, keys: list[str], candidates: list[dict] | None = None,
               plan: dict | None = None, **options: Any) -> httpx.Response:
        body = {"series": {"keys": keys}, "candidates": candidates or CANDIDATES,
                "plan": plan or PLAN}
        return self.post("submitter", "/v1/runs", json=body, **options)

    def complete(self, run_id: int,
                 adjust: Callable[[SeriesResult], SeriesResult] | None = None
                 ) -> BacktestResult:
        """Compute a queued run and store it as a worker would; return the engine's result.

        ``adjust`` changes each series' result before it is stored (to make ties and
        missing scores on purpose)."""
        with self.sessions.begin() as session:
            request = run_request(session, run_id)
            series = [load_series(session, v) for v in request.run.series_version_ids]
            start_run(session, run_id, actor=WORKER)
        result = run_backtest(series, [parse_candidate(s) for s in request.candidate_specs],
                              stored_plan(request.plan_body))
        with self.sessions.begin() as session:
            for version, unit in zip(request.run.series_version_ids, result.series):
                write_series_result(session, run_id, version, adjust(unit) if adjust else unit,
                                    actor=WORKER)
            folds = int(result.timing["folds"])
            record_progress(session, run_id, folds_done=folds, folds_total=folds)
            finish_run(session, run_id, actor=WORKER, software=result.software,
                       timing=result.timing)
        return result


def series_body(series: Series) -> dict[str, Any]:
    """The JSON body posting ``series``."""
    return {"key": series.key, "frequency": series.frequency.duration,
            "season_length": series.season_length,
            "observations": [{"period": p, "value": float(v)}
                             for p, v in zip(series.labels(), series.values)]}


@contextmanager
def serving(url: str, *, keys: bool = True, **settings: Any) -> Iterator[Api]:
    """An app on the store at ``url`` with one key per role (named after the role)."""
    engine = make_engine(url)
    sessions = session_factory(engine)
    tokens = {}
    with sessions.begin() as session:
        for role in ROLES if keys else ():
            tokens[role] = issue_key(session, name=role, role=role, actor="setup")[1].text
    app = create_app(Settings(database_url=url, **settings))
    with TestClient(app, raise_server_exceptions=False) as client:
        yield Api(app, client, sessions, url, tokens)
    engine.dispose()


@pytest.fixture(scope="session")
def sqlite_template(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Path]:
    """A migrated SQLite store, migrated once and copied for each test (copying is fast)."""
    with migrated_store("sqlite", tmp_path_factory.mktemp("template")) as url:
        yield Path(make_url(url).database)


def copied_store(template: Path, directory: Path) -> str:
    """The URL of a copy of the migrated template in ``directory``."""
    shutil.copyfile(template, directory / "foldline.db")
    return f"sqlite:///{directory / 'foldline.db'}"


@pytest.fixture
def api(sqlite_template: Path, tmp_path: Path) -> Iterator[Api]:
    with serving(copied_store(sqlite_template, tmp_path)) as served:
        yield served


@pytest.fixture(params=BACKENDS)
def any_api(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[Api]:
    with migrated_store(request.param, tmp_path) as url, serving(url) as served:
        yield served
