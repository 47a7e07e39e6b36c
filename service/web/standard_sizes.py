"""GET /v1/standard-sizes: the neutral catalogue the engine checks against.

The catalogue lives in the seed_catalog/ files, not in the database: it is reference data
versioned with the code, and every result names the `catalog_version` it used.
"""
from __future__ import annotations

from flask import jsonify
from flask.views import MethodView

from schemas.standard_sizes import StandardSizesSchema
from service.catalog_loader import catalog_as_document, load_catalog
from service.web.smorest import Blueprint

blp = Blueprint("standard-sizes", __name__, url_prefix="/v1/standard-sizes",
                description="Standard thread, seat, reach and hex families with torque guidance and sources.")

_EXAMPLE = {
    "catalog_version": "fbcb0fa264fd",
    "threads": [], "hexes": [], "hex_families": [], "torque": [], "sources": {},
    "cautions": [("Torque values and turn angles are guidance. The engine maker's service data, "
                 "local regulations and licensed practice come first.")],
}


@blp.route("")
class StandardSizes(MethodView):
    @blp.doc(operationId="get_standard_sizes")
    @blp.response(200, StandardSizesSchema, example=_EXAMPLE)
    def get(self):
        """The catalogue of standard sizes, with the source of every value

        Thread sizes (ISO 261 designations) with their standard reaches and gaskets, hexes
        with socket sizes, and installation-torque guidance. Guidance only: the engine
        maker's service data, local regulations and licensed practice come first.
        """
        return jsonify(catalog_as_document(load_catalog()))
