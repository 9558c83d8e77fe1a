"""The tree's layering, read from the import statements of every module.

- ``backtest/`` imports neither the web nor the database framework, nor storage or service;
- ``storage/`` knows no HTTP and nothing of ``service/``;
- storage's subpackages import one way: db <- audit <- series, access, specs <- results <-
  runs, and the ledger reads db, audit, series and specs (the migrations excepted);
- ``service/http`` and ``service/cli`` reach storage only through ``service/usecases``
  (``storage.errors``, the error classes callers map, excepted).
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
STORAGE_LAYERS = {"errors": 0, "db": 1, "audit": 2, "series": 3, "access": 3, "specs": 3,
                  "results": 4, "runs": 5, "ledger": 4}
LEDGER_READS = {"errors", "db", "audit", "series", "specs"}


def _imports(path: Path) -> set[str]:
    found: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text())):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            found.add(node.module)
            found.update(f"{node.module}.{alias.name}" for alias in node.names)
    return found


def _modules(folder: str) -> list[Path]:
    return sorted((ROOT / folder).rglob("*.py"))


def _top(name: str) -> str:
    return name.split(".")[0]


@pytest.mark.parametrize("path", _modules("backtest"), ids=lambda p: p.relative_to(ROOT).as_posix())
def test_the_core_imports_no_framework_and_no_outer_layer(path: Path):
    outer = {"fastapi", "starlette", "sqlalchemy", "uvicorn", "storage", "service"}

    assert {_top(name) for name in _imports(path)} & outer == set()


@pytest.mark.parametrize("path", _modules("storage"), ids=lambda p: p.relative_to(ROOT).as_posix())
def test_storage_knows_no_http_and_no_service(path: Path):
    outer = {"fastapi", "starlette", "uvicorn", "httpx", "service"}

    assert {_top(name) for name in _imports(path)} & outer == set()


def _storage_part(name: str) -> str | None:
    parts = name.split(".")
    return parts[1] if parts[0] == "storage" and len(parts) > 1 else None


@pytest.mark.parametrize("path", _modules("storage"), ids=lambda p: p.relative_to(ROOT).as_posix())
def test_storage_subpackages_import_one_way(path: Path):
    relative = path.relative_to(ROOT / "storage").parts
    own = relative[0].removesuffix(".py")
    if own not in STORAGE_LAYERS or relative[:2] == ("db", "migrations"):
        # storage/__init__.py; and the migrations, which run above every layer (a data
        # migration may fill a table with any layer's code)
        return
    reached = {part for name in _imports(path) if (part := _storage_part(name))
               and part in STORAGE_LAYERS and part != own}
    if own == "ledger":
        assert reached <= LEDGER_READS
    else:
        assert all(STORAGE_LAYERS[part] < STORAGE_LAYERS[own] for part in reached), reached


ENTRY_POINTS = [*_modules("service/http"), *_modules("service/cli")]


@pytest.mark.parametrize("path", ENTRY_POINTS, ids=lambda p: p.relative_to(ROOT).as_posix())
def test_http_and_cli_reach_storage_only_through_the_use_cases(path: Path):
    reached = {name for name in _imports(path) if _top(name) == "storage"}

    assert reached <= {"storage", "storage.errors"} | {
        f"storage.errors.{n}" for n in _error_names()}


def _error_names() -> set[str]:
    tree = ast.parse((ROOT / "storage" / "errors.py").read_text())
    return {node.name for node in tree.body if isinstance(node, (ast.ClassDef, ast.FunctionDef))}


def test_the_layout_checks_see_the_whole_tree():
    assert len(_modules("backtest")) > 50 and len(_modules("storage")) > 30
    assert len(ENTRY_POINTS) > 40
    assert (ROOT / "service" / "usecases" / "submit_run.py").exists()
