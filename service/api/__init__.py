"""The HTTP API: one blueprint module per resource, all under /v1.

To add one: write `service/api/<name>.py` with `blp = Blueprint(...)` (from
`service.api.base`) and add the module name to BLUEPRINT_MODULES below.
"""
from __future__ import annotations

from importlib import import_module

from flask_smorest import Api

# Order is the order of the tags in the OpenAPI document.
BLUEPRINT_MODULES: tuple[str, ...] = (
    "service.api.health",
    "service.api.standard_sizes",
    "service.api.plugs",
    "service.api.heads",
    "service.api.fit_checks",
    "service.api.diagrams",
    "service.api.batch",
    "service.api.exchange",
    "service.api.counter",
)


def register_blueprints(api: Api) -> None:
    for module_name in BLUEPRINT_MODULES:
        api.register_blueprint(import_module(module_name).blp)
