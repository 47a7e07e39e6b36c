"""POST /v1/fit-checks: one plug against one head port.

A computation, not a change: it counts as a read (open unless reads need a key).
Plug and head may each be inline or a reference (`sku`, `head_id`), mixed freely.
"""
from __future__ import annotations

from flask import Response
from flask.views import MethodView

from schemas.inventory import UnitsQuerySchema
from schemas.results import FitResultSchema
from schemas.specs import FitCheckRequestSchema
from service.catalog_loader import load_catalog
from service.formats.result_json import result_document, to_json
from service.store import db, repository
from service.usecases.fit_check import UnknownReference, run_check
from service.web import auth, examples, problems
from service.web.smorest import Blueprint

blp = Blueprint("fit-checks", __name__, url_prefix="/v1/fit-checks",
                description="Does this plug fit this head port? Verdict, findings, geometry, torque guidance.")


@blp.route("")
class FitChecks(MethodView):
    @blp.doc(operationId="check_fit")
    @auth.access(auth.READ)
    @blp.arguments(UnitsQuerySchema, location="query")
    @blp.arguments(FitCheckRequestSchema, examples={
        "inline": {"summary": "Both inline", "value": examples.FIT_CHECK_INLINE},
        "by reference": {"summary": "A stored plug in a stored head", "value": examples.FIT_CHECK_BY_REFERENCE},
    })
    @blp.response(200, FitResultSchema, example=examples.FIT_RESULT)
    @blp.alt_response(404, response="NOT_FOUND")
    def post(self, query, request_document):
        """Check whether a plug fits a head port

        `verdict` is fail when any finding fails, else warn when any warns, else pass.
        `?units=imperial` answers in inches and lbf*ft. An unknown sku or head_id is a 404
        naming it. Torque, clearance and gap figures are guidance: the engine maker's
        service data, local regulations and licensed practice come first.
        """
        session = db.session()
        plugs, heads = repository.plugs(session), repository.heads(session)
        try:
            result = run_check(request_document, load_catalog(), plugs.document, heads.document)
        except UnknownReference as unknown:
            problems.abort(404, f"No {unknown.what} {unknown.identifier!r}.", errors=unknown.errors())
        # The fast writer, not a marshmallow dump: FitResultSchema documents this shape and
        # tests load what is sent through it.
        return Response(to_json(result_document(result, query["units"])), mimetype="application/json")
