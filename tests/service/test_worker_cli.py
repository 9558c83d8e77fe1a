"""``foldline worker`` refuses bad settings with one line on stderr and exit code 2."""

from __future__ import annotations

from collections.abc import Iterator

import pytest

from service.cli.main import main
from service.settings import get_settings


@pytest.fixture(autouse=True)
def fresh_settings() -> Iterator[None]:
    get_settings.cache_clear()
    yield
    get_settings.cache_clear()


@pytest.mark.parametrize("variable, value, message", [
    ("FOLDLINE_LEASE_SECONDS", "0.5", "FOLDLINE_LEASE_SECONDS: Input should be greater than 1"),
    ("FOLDLINE_WORKER_JOBS", "many", "FOLDLINE_WORKER_JOBS: Input should be a valid integer"),
    ("FOLDLINE_DATABASE_URL", "not a url", "invalid database URL"),
])
def test_worker_with_bad_settings_exits_2_naming_the_problem(variable, value, message,
                                                             monkeypatch, capsys):
    monkeypatch.setenv(variable, value)

    assert main(["worker"]) == 2

    error = capsys.readouterr().err
    assert error.startswith("foldline: error: ") and message in error
    assert error.count("\n") == 1
