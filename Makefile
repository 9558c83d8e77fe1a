# Two entry points for a fresh machine: `make demo` and `make test`.
# Each creates .venv and installs the locked versions (requirements.lock, exact versions with
# hashes) when needed, so a fresh machine gets what CI tested. `make lock` upgrades the lock
# deliberately; run `make test` on the upgraded set before committing it.
PYTHON ?= python3
VENV := .venv
LOCK := requirements.lock
STAMP := $(VENV)/.installed
# The lock is made with uv (a well-kept resolver that writes hashes for every platform's wheels).
UV_VERSION := 0.13.9

.PHONY: demo test lint bench lock

$(STAMP): pyproject.toml $(LOCK)
	$(PYTHON) -m venv --clear $(VENV)
	$(VENV)/bin/pip install --quiet --require-hashes --no-deps -r $(LOCK)
	$(VENV)/bin/pip install --quiet --no-deps -e .
	touch $(STAMP)

demo: $(STAMP)
	$(VENV)/bin/foldline demo

test: $(STAMP)
	$(VENV)/bin/ruff check .
	$(VENV)/bin/mypy
	$(VENV)/bin/python -m pytest

lint: $(STAMP)
	$(VENV)/bin/ruff check .
	$(VENV)/bin/mypy

lock: $(STAMP)
	$(VENV)/bin/pip install --quiet uv==$(UV_VERSION)
	$(VENV)/bin/uv pip compile pyproject.toml --extra dev --generate-hashes --upgrade \
		--python-version 3.11 --custom-compile-command "make lock" -o $(LOCK)
