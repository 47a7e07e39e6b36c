"""Fixtures for the pure layer: the seeded catalogue (read once) and request builders."""
from __future__ import annotations

import pytest

from schemas.specs import FitCheckRequestSchema
from service.catalog_loader import load_catalog
from service.usecases.fit_check import run_check


@pytest.fixture(scope="session")
def catalog():
    return load_catalog()


@pytest.fixture(scope="session")
def check(catalog):
    """Run a contract-shaped request body through the schemas and the engine."""
    schema = FitCheckRequestSchema()

    def run(plug: dict, head: dict, options: dict | None = None):
        body = {"plug": plug, "head": head, "options": options or {}}
        return run_check(schema.load(body), catalog, lambda sku: None, lambda head_id: None)

    return run
