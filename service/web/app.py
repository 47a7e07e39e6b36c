"""plugfit's Flask application factory.

Nothing is created at import: `create_app()` builds the app, its database engine and its
API each time it is called, so tests get a fresh app per temporary database and the CLI
can build one for whatever PLUGFIT_DATABASE_URL says.
"""
from __future__ import annotations

import logging
from collections.abc import Mapping
from importlib import import_module
from typing import Any

from flask import Flask

from service import config
from service.store import db
from service.web import auth, limits, nul_characters, problems, reference, request_log
from service.web.smorest import Api

API_TITLE = "plugfit"
API_VERSION = "1"

# One module per resource, each with a `blp`; the order is the order of the tags in the
# OpenAPI document. To add one, write `service/web/<name>.py` with
# `blp = Blueprint(...)` (from `service.web.smorest`) and list it here.
BLUEPRINT_MODULES: tuple[str, ...] = (
    "service.web.health",
    "service.web.standard_sizes",
    "service.web.plugs",
    "service.web.heads",
    "service.web.fit_checks",
    "service.web.diagrams",
    "service.web.fit_check_batch",
    "service.web.exchange",
    "service.web.parts_counter",
)


def register_blueprints(api: Api) -> None:
    for module_name in BLUEPRINT_MODULES:
        api.register_blueprint(import_module(module_name).blp)


def create_app(test_config: Mapping[str, Any] | None = None) -> Flask:
    """Build the app: class defaults, then PLUGFIT_* environment variables, then
    `test_config` (used by tests to point at a temporary database)."""
    app = Flask(__name__, instance_relative_config=True, static_folder=None)
    settings = config.load_settings(test_config, instance_path=app.instance_path)
    app.config.update(settings)
    app.config.update({key: value for key, value in (test_config or {}).items() if key not in settings})
    app.config.update(
        MAX_CONTENT_LENGTH=app.config["MAX_BODY_BYTES"],
        API_TITLE=API_TITLE,
        API_VERSION=API_VERSION,
        OPENAPI_VERSION="3.0.3",
        OPENAPI_URL_PREFIX="/v1",
        OPENAPI_JSON_PATH="openapi.json",
        # The browsable reference at /v1/docs, from packaged assets (service.web.reference).
        OPENAPI_SWAGGER_UI_PATH="docs",
        OPENAPI_SWAGGER_UI_URL=reference.ASSETS_PATH,
        OPENAPI_SWAGGER_UI_CONFIG=reference.VIEWER_CONFIG,
        API_SPEC_OPTIONS={"info": {
            "description": "Checks whether a spark plug fits a cylinder-head port: thread, seat, "
                           "reach, clearances, tool access and torque guidance. Torque, clearance "
                           "and gap figures are guidance; the engine maker's service data, local "
                           "regulations and licensed practice come first.",
        }},
        # Keep JSON key order as the schemas declare it (geometry reads nominal → max).
        JSON_SORT_KEYS=False,
    )
    app.json.sort_keys = False
    # werkzeug answers `//v1//plugs` with a 308 redirect (an HTML page) to the merged
    # path; an API answers what it was asked: a 404 problem for a path it does not serve.
    app.url_map.merge_slashes = False

    request_log.init_app(app)
    for unknown in config.from_environment()[1]:
        logging.getLogger("plugfit.config").warning(
            "ignoring environment variable that names no setting",
            extra={"fields": {"variable": unknown.variable}},
        )
    db.init_app(app)
    auth.init_app(app)
    api = Api(app)
    problems.init_app(app)
    limits.init_app(app)
    nul_characters.init_app(app)
    register_blueprints(api)
    app.register_blueprint(reference.blp)
    app.extensions["plugfit.api"] = api
    return app
