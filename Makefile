# Two commands on a fresh machine: `make run` and `make test` (see README.md).
# Everything is installed into .venv from pyproject.toml; nothing is needed beforehand
# but Python 3.11+ and network access to the package index.

PYTHON ?= $(shell command -v python3.13 || command -v python3.12 || command -v python3.11 || command -v python3)
VENV   := .venv
BIN    := $(VENV)/bin
STAMP  := $(VENV)/.installed
HOST   ?= 127.0.0.1
PORT   ?= 8000

.PHONY: run test venv migrate seed serve

## Set up the virtual environment (again only when pyproject.toml changed).
venv: $(STAMP)

$(STAMP): pyproject.toml
	@$(PYTHON) -c 'import sys; sys.exit(0 if sys.version_info >= (3, 11) else "plugfit needs Python 3.11 or newer; set PYTHON=/path/to/python3.11")'
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
