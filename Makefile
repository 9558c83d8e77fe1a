# Two entry points for a fresh machine: `make demo` and `make test`.
# Each creates .venv and installs the project (with its test tools) when needed.
PYTHON ?= python3
VENV := .venv
STAMP := $(VENV)/.installed

.PHONY: demo test lint bench

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(VENV)/bin/pip install --quiet --upgrade pip
	$(VENV)/bin/pip install --quiet -e '.[dev]'
	touch $(STAMP)

demo: $(STAMP)
	$(VENV)/bin/foldline demo

test: $(STAMP)
	$(VENV)/bin/ruff check .
	$(VENV)/bin/python -m pytest

lint: $(STAMP)
	$(VENV)/bin/ruff check .
