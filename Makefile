# Two commands on a fresh machine: `make run` and `make test` (see README.md).
# Everything is installed into .venv from pyproject.toml; nothing is needed beforehand
# but Python 3.11+ and network access to the package index.

# The first of these that runs and is 3.11 or newer (a pyenv shim may exist but not run).
PYTHON ?= $(shell for candidate in python3 python3.13 python3.12 python3.11; do \
            if $$candidate -c 'import sys; sys.exit(sys.version_info < (3, 11))' 2>/dev/null; then \
              command -v $$candidate; break; fi; done)
VENV   := .venv
BIN    := $(VENV)/bin
# Two stamps: `make run` installs the service's runtime dependencies only; `make test`
# adds the test extras (scientific and fuzzing libraries, linters).
STAMP  := $(VENV)/.installed
TEST_STAMP := $(VENV)/.installed-test
HOST   ?= 127.0.0.1
PORT   ?= 8000
# The PostgreSQL server of the second test run (needs CREATE DATABASE rights; the run
# makes and drops a scratch database of its own). REQUIRE_POSTGRES=1 makes its absence fatal.
POSTGRES_URL ?= postgresql+psycopg://postgres@127.0.0.1:5432/postgres

.PHONY: run test test-sqlite test-postgres lint venv venv-test migrate seed serve bench bench-load bench-counter \
	bench-imports

## Set up the virtual environment with the runtime dependencies (again only when
## pyproject.toml changed).
venv: $(STAMP)

$(STAMP): pyproject.toml
	@test -n "$(PYTHON)" || { echo "plugfit needs Python 3.11 or newer; set PYTHON=/path/to/python3.11" >&2; exit 1; }
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e .
	touch $(STAMP)

## The same environment plus the test extras.
venv-test: $(TEST_STAMP)

$(TEST_STAMP): $(STAMP)
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(TEST_STAMP)

## Set up, migrate, seed (with the demo shop) and serve on http://$(HOST):$(PORT).
run: venv migrate seed serve

migrate: venv
	$(BIN)/plugfit db upgrade

seed: venv
	$(BIN)/plugfit seed --demo

serve: venv
	$(BIN)/plugfit serve --host $(HOST) --port $(PORT)

## The whole test suite on SQLite, then the database layers again on PostgreSQL when a
## server answers at POSTGRES_URL (otherwise it says clearly that this part was skipped).
test: lint test-sqlite
	@if $(BIN)/python -m tests.postgres reachable '$(POSTGRES_URL)'; then \
	  $(MAKE) --no-print-directory test-postgres; \
	elif [ -n "$(REQUIRE_POSTGRES)" ]; then \
	  echo "FAILED: REQUIRE_POSTGRES is set but no PostgreSQL answers at $(POSTGRES_URL)" >&2; exit 1; \
	else \
	  echo; echo "*** PostgreSQL part SKIPPED: no server answers at $(POSTGRES_URL)."; \
	  echo "*** Only SQLite was tested. Set POSTGRES_URL=postgresql+psycopg://USER@HOST:PORT/DB to include it."; \
	fi

test-sqlite: venv-test
	$(BIN)/python -m pytest

## Habits: ruff (default rules, import sorting, pyupgrade, bugbear), mypy --strict on the
## engine, and the layering contracts (import-linter; see pyproject.toml).
lint: venv-test
	$(BIN)/ruff check .
	$(BIN)/mypy service/fitment
	$(BIN)/lint-imports

## The database layers (tests/integration, tests/api, real servers included) on PostgreSQL.
test-postgres: venv-test
	PLUGFIT_TEST_POSTGRES_URL='$(POSTGRES_URL)' $(BIN)/python -m pytest tests/integration tests/api

## The engine benchmark (pytest-benchmark; benchmarks/bench_engine.py). Not part of `make test`.
bench: venv-test
	$(BIN)/python -m pytest benchmarks/bench_engine.py --benchmark-only -p no:cacheprovider -s

## Load benchmark over loopback (see benchmarks/bench_load.py; uses wrk when installed).
bench-load: venv-test
	$(BIN)/python benchmarks/bench_load.py

## The parts counter over 100,000 plugs and under 32 connections (benchmarks/bench_counter.py;
## uses wrk when installed), on SQLite and, when a server answers at POSTGRES_URL, PostgreSQL.
bench-counter: venv-test
	@if $(BIN)/python -m tests.postgres reachable '$(POSTGRES_URL)'; then \
	  $(BIN)/python benchmarks/bench_counter.py --postgres '$(POSTGRES_URL)'; \
	else \
	  echo "*** no PostgreSQL answers at $(POSTGRES_URL): SQLite only"; $(BIN)/python benchmarks/bench_counter.py; \
	fi

## Imports of 100,000 plugs over HTTP and 100,000 and 1,000,000 through the CLI, beside a bare
## parse-and-insert (benchmarks/bench_imports.py), on SQLite and, when a server answers at
## POSTGRES_URL, PostgreSQL. Takes several minutes.
bench-imports: venv-test
	@if $(BIN)/python -m tests.postgres reachable '$(POSTGRES_URL)'; then \
	  $(BIN)/python benchmarks/bench_imports.py --postgres '$(POSTGRES_URL)'; \
	else \
	  echo "*** no PostgreSQL answers at $(POSTGRES_URL): SQLite only"; $(BIN)/python benchmarks/bench_imports.py; \
	fi
