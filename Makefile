# Forebook: the two set-up commands are `make demo` and `make test`; everything else is a helper.
SHELL := /bin/bash
PYTHON ?= python3
VENV := .venv
PY := $(VENV)/bin/python
PG_URL ?= postgres://postgres@127.0.0.1:5432/forebook

.PHONY: demo test test-sqlite bench system-packages services clean-venv

## Run the app with the invented demo lab on SQLite at http://127.0.0.1:8000 (no services needed).
demo: $(VENV)/.installed
	$(PY) manage.py migrate --noinput
	$(PY) manage.py create_signing_identity
	$(PY) manage.py seed_demo
	@echo "Open http://127.0.0.1:8000 and sign in as maren / lantern-demo-2026 (see README)."
	$(PY) manage.py runserver 127.0.0.1:8000

## Install everything the tests need (apt packages included), start PostgreSQL and Redis, run the suite.
test: $(VENV)/.installed-test system-packages services
	DATABASE_URL=$${DATABASE_URL:-$(PG_URL)} $(VENV)/bin/pytest -n auto $(PYTEST_ARGS)

## The same suite on the embedded SQLite default (PostgreSQL-only tests are skipped, with a reason).
test-sqlite: $(VENV)/.installed-test system-packages
	DATABASE_URL=sqlite:///$(CURDIR)/tests/.unused.sqlite3 $(VENV)/bin/pytest -n auto $(PYTEST_ARGS)

## Benchmarks and their budgets (see README, Performance).
bench: $(VENV)/.installed-test services
	DATABASE_URL=$${DATABASE_URL:-$(PG_URL)} $(PY) tests/bench/run.py $(BENCH_ARGS)

$(VENV)/bin/python:
	$(PYTHON) -m venv $(VENV)
	$(VENV)/bin/pip install --quiet --upgrade pip

$(VENV)/.installed: pyproject.toml | $(VENV)/bin/python
	$(VENV)/bin/pip install --quiet -e .
	touch $@

$(VENV)/.installed-test: pyproject.toml | $(VENV)/bin/python
	$(VENV)/bin/pip install --quiet -e '.[test]'
	touch $(VENV)/.installed $@

system-packages:
	@.ci/system-packages

services:
	@.ci/services

clean-venv:
	rm -rf $(VENV)
