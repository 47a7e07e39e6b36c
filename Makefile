# Two commands on a fresh machine: `make run` and `make test` (see README.md).
# Everything is installed into .venv from pyproject.toml; nothing is needed beforehand
# but Python 3.11+ and network access to the package index.

# The first of these that runs and is 3.11 or newer (a pyenv shim may exist but not run).
PYTHON ?= $(shell for candidate in python3 python3.13 python3.12 python3.11; do \
            if $$candidate -c 'import sys; sys.exit(sys.version_info < (3, 11))' 2>/dev/null; then \
              command -v $$candidate; break; fi; done)
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed
HOST   ?= 127.0.0.1
PORT   ?= 8000

.PHONY: run test venv migrate seed serve

## Set up the virtual environment (again only when pyproject.toml changed).
venv: $(STAMP)

$(STAMP): pyproject.toml
	@test -n "$(PYTHON)" || { echo "plugfit needs Python 3.11 or newer; set PYTHON=/path/to/python3.11" >&2; exit 1; }
	test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]'
	touch $(STAMP)

## Set up, migrate, seed (with the demo shop) and serve on http://$(HOST):$(PORT).
run: venv migrate seed serve

migrate: venv
	$(BIN)/plugfit db upgrade

seed: venv
	$(BIN)/plugfit seed --demo

serve: venv
	$(BIN)/plugfit serve --host $(HOST) --port $(PORT)

## The whole test suite.
test: venv
	$(BIN)/python -m pytest
