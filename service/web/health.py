"""GET /v1/health: liveness plus database reachability, for probes and load balancers."""
from __future__ import annotations

import logging
from importlib.metadata import PackageNotFoundError, version

from flask.views import MethodView
from sqlalchemy.exc import SQLAlchemyError

from schemas.health import HealthSchema
from service.store import db
from service.web import auth, problems
from service.web.smorest import Blueprint

blp = Blueprint("health", __name__, url_prefix="/v1/health", description="Is the service up and its database reachable?")
log = logging.getLogger("plugfit.health")


def package_version() -> str:
    try:
        return version("plugfit")
    except PackageNotFoundError:
        return "unknown"


@blp.route("")
class Health(MethodView):
    @blp.doc(operationId="get_health")
    @auth.access(auth.PUBLIC)
    @blp.response(200, HealthSchema, example={"status": "ok", "database": "ok", "version": "0.1.0"})
    @blp.alt_response(503, response="SERVICE_UNAVAILABLE")
    def get(self):
        """Liveness and database reachability

        200 when the service runs and its database answers; 503 problem otherwise.
        Always open, even when reads need a key, so probes need no secret.
        """
        try:
            db.get_database().ping()
        except SQLAlchemyError as error:
            log.error("database unreachable", extra={"fields": {"error": type(error).__name__}})
            problems.abort(503, "The database does not answer.", slug="database-unavailable",
                           headers={"Retry-After": "1"})
        return {"status": "ok", "database": "ok", "version": package_version()}
