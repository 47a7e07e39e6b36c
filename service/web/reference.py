"""The browsable API reference at /v1/docs and the service's front door at /.

The reference is Swagger UI, rendered by flask-smorest from the live OpenAPI document
(settings `OPENAPI_SWAGGER_UI_*` in `service.web.app`); its scripts and styles are the
ones the `flask-swagger-ui` package ships, served from here, so the page asks nothing of
any other host (no CDN, and the validator badge, which would call an outside service, is
off). `/` answers a short index that links to it: JSON for programs, HTML for browsers,
and RFC 8631 `Link` headers (`service-desc`, `service-doc`) for both.

Not in the OpenAPI document (they serve it) and always open, like the document itself.
"""
from __future__ import annotations

from importlib.resources import files

from flask import Blueprint, Response, current_app, jsonify, render_template_string, request, send_from_directory

DOCS_PATH = "/v1/docs"
ASSETS_PATH = DOCS_PATH + "/assets/"
OPENAPI_PATH = "/v1/openapi.json"
# The Swagger UI build that the flask-swagger-ui package bundles (its `dist` folder).
ASSETS_DIRECTORY = str(files("flask_swagger_ui") / "dist")

# Swagger UI settings: the operationId is shown beside each operation (it is the function
# name a generated client uses), and nothing is sent to an outside validator.
VIEWER_CONFIG = {"validatorUrl": None, "displayOperationId": True, "deepLinking": True,
                 "defaultModelsExpandDepth": 0, "docExpansion": "list"}

blp = Blueprint("api-reference", __name__)

_INDEX_HTML = """<!DOCTYPE html>
<html lang="en">
<head><meta charset="utf-8"><title>plugfit</title></head>
<body>
<h1>plugfit</h1>
<p>Does this spark plug fit this cylinder-head port? A REST service for parts counters,
workshops and CI.</p>
<ul>
<li><a href="{{ docs }}">API reference</a> (browsable, with every operation, field and example)</li>
<li><a href="{{ openapi }}">OpenAPI document</a> (for client generators)</li>
<li><a href="{{ health }}">Health</a></li>
</ul>
<p>Torque, clearance and gap figures are guidance. The engine maker's service data, local
regulations and licensed practice come first.</p>
</body>
</html>
"""


def _links() -> dict[str, str]:
    return {"docs": DOCS_PATH, "openapi": OPENAPI_PATH, "health": "/v1/health"}


@blp.route("/")
def index() -> Response:
    """The front door: where the reference, the document and the health check are."""
    links = _links()
    if request.accept_mimetypes.best_match(["application/json", "text/html"]) == "text/html":
        response = Response(render_template_string(_INDEX_HTML, **links), mimetype="text/html")
    else:
        response = jsonify({"service": current_app.config["API_TITLE"], "links": links})
    response.headers["Link"] = f'<{OPENAPI_PATH}>; rel="service-desc", <{DOCS_PATH}>; rel="service-doc"'
    return response


@blp.route(ASSETS_PATH + "<path:name>")
def asset(name: str) -> Response:
    """A file of the bundled Swagger UI build (404 for anything else)."""
    return send_from_directory(ASSETS_DIRECTORY, name, max_age=86400)
