"""plugfit's Flask application factory.

Nothing is created at import: `create_app()` builds the app, its database engine and its
API each time it is called, so tests get a fresh app per temporary database and the CLI
can build one for whatever PLUGFIT_DATABASE_URL says.
"""
from __future__ import annotations

from typing import TYPE_CHECKING, Any, Mapping

if TYPE_CHECKING:  # pragma: no cover
    from flask import Flask

API_TITLE = "plugfit"
API_VERSION = "1"


def create_app(test_config: Mapping[str, Any] | None = None) -> "Flask":
    """Build the app: class defaults, then PLUGFIT_* environment variables, then
    `test_config` (used by tests to point at a temporary database)."""
    import logging as std_logging

    # Imported here, not at the top: `import service.fitment` (the embedded CLI, the
    # engine's users) must not pay for Flask.
    from flask import Flask

    from service import auth, config, db, limits, problems
    from service import logging as service_logging
    from service.api import register_blueprints
    from service.api.base import Api

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

    service_logging.init_app(app)
    for unknown in config.from_environment()[1]:
        std_logging.getLogger("plugfit.config").warning(
            "ignoring environment variable that names no setting",
            extra={"fields": {"variable": unknown.variable}},
        )
    db.init_app(app)
    auth.init_app(app)
    api = Api(app)
    problems.init_app(app)
    limits.init_app(app)
    register_blueprints(api)
    app.extensions["plugfit.api"] = api
    return app
