"""The served OpenAPI document declares every answer each operation can give."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from backtest.models import FAMILIES
from tests.service.conftest import Api, copied_store, serving

PUBLIC = {"/health/live", "/health/ready", "/metrics"}
NOT_JSON = {"/metrics", "/v1/runs/{run_id}/report"}


@pytest.fixture(scope="module")
def spec(sqlite_template: Path, tmp_path_factory: pytest.TempPathFactory) -> dict:
    """The document as served (built once: FastAPI takes a while to build it)."""
    with serving(copied_store(sqlite_template, tmp_path_factory.mktemp("openapi"))) as api:
        response = api.client.get("/openapi.json")
    assert response.status_code == 200
    return response.json()


def _operations(spec: dict):
    for path, operations in spec["paths"].items():
        for method, operation in operations.items():
            yield path, method, operation


def test_every_success_answer_has_a_declared_schema(spec: dict):
    for path, method, operation in _operations(spec):
        success = {s: r for s, r in operation["responses"].items() if s.startswith("2")}
        assert success, (method, path)
        for answer in success.values():
            schemas = [c.get("schema") for c in answer["content"].values()]
            assert schemas and all(schemas), (method, path)
            if path not in NOT_JSON:
                assert "$ref" in answer["content"]["application/json"]["schema"], (method, path)


def test_every_error_answer_is_a_problem_document(spec: dict):
    for path, method, operation in _operations(spec):
        errors = {s: r for s, r in operation["responses"].items() if s[0] in "45"}
        assert errors, (method, path)
        for status, answer in errors.items():
            assert list(answer["content"]) == ["application/problem+json"], (path, status)
            assert answer["content"]["application/problem+json"]["schema"]["$ref"] == \
                "#/components/schemas/Problem"


def test_authenticated_operations_declare_the_bearer_key_and_its_refusals(spec: dict):
    assert spec["components"]["securitySchemes"]["HTTPBearer"]["scheme"] == "bearer"
    for path, method, operation in _operations(spec):
        if path in PUBLIC:
            assert "security" not in operation
            continue
        assert operation["security"] == [{"HTTPBearer": []}], (method, path)
        assert {"401", "403", "422"} <= set(operation["responses"]), (method, path)
        if method == "post" and "requestBody" in operation:
            assert "413" in operation["responses"], (method, path)


def test_csv_alternatives_and_the_upload_body_are_declared(spec: dict):
    scores = spec["paths"]["/v1/runs/{run_id}/scores"]["get"]["responses"]["200"]
    upload = spec["paths"]["/v1/series/upload"]["post"]["requestBody"]

    assert set(scores["content"]) == {"application/json", "text/csv"}
    assert "run_id, series_key, series_version" in scores["description"]
    assert list(upload["content"]) == ["text/csv"]


def test_candidate_families_are_listed(spec: dict):
    family = spec["components"]["schemas"]["CandidateIn"]["properties"]["family"]

    assert sorted(family["enum"]) == sorted(FAMILIES)


def test_the_problem_schema_has_the_standard_members(spec: dict):
    problem = spec["components"]["schemas"]["Problem"]

    assert {"type", "title", "status", "detail", "instance"} <= set(problem["required"])


def test_the_interactive_docs_are_served(api: Api):
    response = api.client.get("/docs")

    assert response.status_code == 200 and "openapi.json" in response.text
    assert "http" not in response.text.replace("http-equiv", "")  # nothing from elsewhere
    for asset in re.findall(r'(?:src|href)="(/docs-assets/[^"]+)"', response.text):
        assert api.client.get(asset).status_code == 200, asset
