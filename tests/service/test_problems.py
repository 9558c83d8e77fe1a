"""Errors are RFC 9457 problem documents; every error class has its entry in one table."""

from __future__ import annotations

import pytest
from fastapi.exceptions import RequestValidationError
from sqlalchemy.exc import OperationalError
from starlette.requests import Request

from backtest import errors as backtest_errors
from service import errors as service_errors
from service.http.problems import PROBLEMS, _problem, kind_of, pointer
from storage import errors as storage_errors
from tests.service.conftest import Api

BASES = [backtest_errors.BacktestError, storage_errors.StorageError, service_errors.ServiceError]


def _leaves(base: type[Exception]) -> list[type[Exception]]:
    found = []
    for sub in base.__subclasses__():
        found += [sub, *_leaves(sub)]
    return found


@pytest.mark.parametrize("base", BASES, ids=lambda b: b.__name__)
def test_every_error_class_has_its_own_entry(base):
    missing = [leaf for leaf in [base, *_leaves(base)] if leaf not in PROBLEMS]

    assert missing == []


def test_every_error_class_lives_in_its_packages_errors_module():
    modules = {leaf.__module__ for base in BASES for leaf in [base, *_leaves(base)]}

    assert modules == {"backtest.errors", "storage.errors", "service.errors",
                       "backtest.ledger.errors"}


def test_one_code_per_client_mistake_across_every_family():
    codes = [leaf.code for base in BASES for leaf in [base, *_leaves(base)]]
    repeated = sorted({code for code in codes if codes.count(code) > 1})

    assert repeated == []
    assert {"invalid_candidate", "invalid_plan", "lease_lost"} <= set(codes)


def test_errors_a_client_causes_are_4xx_and_only_the_servers_are_5xx():
    client_caused = [*_leaves(backtest_errors.BacktestError), storage_errors.NotFoundError,
                     storage_errors.ConflictError, storage_errors.ImmutableRecordError,
                     *[leaf for leaf in _leaves(service_errors.ServiceError)
                       if leaf is not service_errors.NotReadyError], RequestValidationError]

    assert all(400 <= PROBLEMS[leaf].status < 500 for leaf in client_caused)
    assert {PROBLEMS[e].status for e in (storage_errors.StorageError,
                                         storage_errors.ConfigurationError, Exception)} == {500}
    assert PROBLEMS[storage_errors.StoreUnavailableError].status == 503


def test_an_unmapped_subclass_is_answered_as_its_family():
    class SurpriseError(storage_errors.ConflictError):
        code = "surprise"

    assert kind_of(SurpriseError("x")) == PROBLEMS[storage_errors.ConflictError]
    assert kind_of(KeyError("x")) == PROBLEMS[Exception]


def test_a_problem_document_has_the_standard_members(api: Api):
    response = api.get("reader", "/v1/series/no/such/key")

    assert response.status_code == 404
    assert response.headers["content-type"] == "application/problem+json"
    assert response.json() == {
        "type": "urn:foldline:problem:not_found", "title": "Not found", "status": 404,
        "detail": "series 'no/such/key' does not exist", "instance": "/v1/series/no/such/key",
        "code": "not_found", "errors": []}


def test_unknown_paths_and_methods_are_problems_too(api: Api):
    missing = api.get("reader", "/v2/anything")
    wrong_method = api.request("reader", "DELETE", "/v1/series")

    assert (missing.status_code, missing.json()["code"]) == (404, "not_found")
    assert (wrong_method.status_code, wrong_method.json()["code"]) == (405, "method_not_allowed")
    assert wrong_method.headers["content-type"] == "application/problem+json"


def test_validation_errors_point_at_each_field(api: Api):
    response = api.post("submitter", "/v1/series", json={
        "key": "k", "frequency": "P1M", "observations": [{"period": "2024-01", "value": "x"}],
        "colour": "red"})

    problem = response.json()
    assert response.status_code == 422 and problem["code"] == "invalid_request"
    assert {(e["location"], e["pointer"]) for e in problem["errors"]} == {
        ("body", "/observations/0/value"), ("body", "/colour")}


def test_a_body_that_is_not_json_is_a_problem(api: Api):
    response = api.post("submitter", "/v1/series", content=b"{not json",
                        headers={"Content-Type": "application/json"})

    assert response.status_code == 422
    assert response.json()["errors"][0]["message"].startswith("the body is not valid JSON")


def test_an_unexpected_failure_is_a_500_problem_without_internals(api: Api):
    def broken() -> None:
        raise RuntimeError("secret internal state at 0xdeadbeef")

    api.app.add_api_route("/broken", broken)

    response = api.client.get("/broken")

    assert response.status_code == 500
    assert response.json()["code"] == "internal_error"
    assert "deadbeef" not in response.text and "Traceback" not in response.text


def test_json_pointers_escape_slashes_and_tildes():
    assert pointer(["a/b", "c~d", 0]) == "/a~1b/c~0d/0"


def test_a_database_error_raised_outside_storage_is_503_to_retry():
    # A commit or rollback on a connection the server dropped raises SQLAlchemy's own
    # error after the storage function returned.
    dropped = OperationalError("COMMIT", {}, Exception("server closed the connection"))
    request = Request({"type": "http", "method": "GET", "path": "/v1/series",
                       "headers": [], "query_string": b""})

    problem, headers = _problem(request, dropped)

    assert problem.status == 503 and problem.code == "store_unavailable"
    assert headers["Retry-After"]
    assert "server closed" not in problem.detail
