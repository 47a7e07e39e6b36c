"""POST /v1/fit-checks/diagram: the same check, answered as a to-scale SVG drawing.

A read like the check itself. The body is the check's own schema (`FitCheckRequestSchema`),
so a client can send one document to either endpoint; `?units=imperial` labels the
margins in inches. The drawing is made by `service.formats.drawing` from the engine's result.
"""
from __future__ import annotations

from flask import Response
from flask.views import MethodView

from schemas.inventory import UnitsQuerySchema
from schemas.specs import FitCheckRequestSchema
from service.catalog_loader import load_catalog
from service.store import db, repository
from service.usecases import fit_check
from service.usecases.fit_check import UnknownReference
from service.web import auth, examples, problems
from service.web.smorest import Blueprint

SVG_MEDIA_TYPE = "image/svg+xml"
# The start of an answer, for the OpenAPI document (a real drawing is a few hundred lines).
EXAMPLE_SVG = ('<svg xmlns="http://www.w3.org/2000/svg" width="920" height="800" data-px-per-mm="13.4" '
               'data-origin-y="211.3" data-axis-x="254.4" data-units="metric">...</svg>')

blp = Blueprint("drawings", __name__, url_prefix="/v1/fit-checks",
                description="The fit as a to-scale section drawing (SVG).")


@blp.route("/diagram")
class FitCheckDiagram(MethodView):
    @blp.doc(operationId="draw_fit")
    @auth.access(auth.READ)
    @blp.arguments(UnitsQuerySchema, location="query")
    @blp.arguments(FitCheckRequestSchema, example=examples.FIT_CHECK_INLINE)
    @blp.response(200, {"type": "string", "description": "an SVG document (XML text)"}, content_type=SVG_MEDIA_TYPE, example=EXAMPLE_SVG,
                  description="An SVG section along the plug axis, to scale; findings marked by severity.")
    @blp.alt_response(404, response="NOT_FOUND")
    def post(self, query, request_document):
        """Draw a plug in a head port

        Takes the same body as `POST /v1/fit-checks` and answers `image/svg+xml`: a section
        along the plug axis at one scale (the root element's `data-px-per-mm`), with the
        seat face, port, gasket, plug, firing end, chamber surface, piston crown at top dead
        centre and valve where given, the margins dimensioned in the requested units and
        the findings marked by severity with a legend. Values are guidance: the engine
        maker's service data, local regulations and licensed practice come first.
        """
        session = db.session()
        plugs, heads = repository.plugs(session), repository.heads(session)
        try:
            svg = fit_check.draw_check(request_document, load_catalog(), plugs.document, heads.document,
                                     query["units"])
        except UnknownReference as unknown:
            problems.abort(404, f"No {unknown.what} {unknown.identifier!r}.", errors=unknown.errors())
        return Response(svg, mimetype=SVG_MEDIA_TYPE)
