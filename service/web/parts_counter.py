"""The parts counter: GET /v1/heads/{head_id}/fitting-plugs and GET /v1/plugs/{sku}/interchanges.

Reads. The search itself is `service.usecases.parts_search` (the database groups the
plugs by design, the engine judges each design once, and the ranking is kept until a
plug or head changes); this module parses the query, calls it, and writes the page with
`service.formats.counter_lines`.
"""
from __future__ import annotations

from typing import Any

from flask import Response, current_app
from flask.views import MethodView

from schemas.answers import PlugSchema
from schemas.counter import FULL, FittingPlugSchema, FittingPlugsQuerySchema, InterchangeQuerySchema, InterchangeSchema
from schemas.specs import options_from
from service.catalog_loader import load_catalog
from service.fitment.search import INTERCHANGE_CAUTIONS, THREAD_END_TOLERANCE_MM, TIP_TOLERANCE_MM, Tolerances
from service.formats.counter_lines import FittingLines, interchange_line
from service.formats.result_json import result_document
from service.store import db
from service.usecases import parts_search
from service.web import examples, records
from service.web.smorest import Blueprint

blp = Blueprint("parts-counter", __name__, url_prefix="/v1",
                description="What fits this head, and what can replace this plug, from the shop's own stock.")

HEAD_ID_PARAMETER = {"in": "path", "name": "head_id", "description": "The head's identifier (case-sensitive)."}
SKU_PARAMETER = {"in": "path", "name": "sku", "description": "The plug's sku (case-sensitive)."}

# The demo shop's answers (seed_catalog/demo/, invented data).
_DEMO_LINE = {"description": "Demo house line: M14 flat seat, 19 mm reach, standard tip, resistor, cooling index "
                             "0.50, gap 0.8 mm", "quantity_on_hand": 2, "location": "C-03-2",
              "heat_range": {"scale": "demo-cooling-index", "value": 0.5}}
EXAMPLE_FITTING = [{
    "sku": "DEMO-P-0001", **_DEMO_LINE, "verdict": "pass", "codes": [],
    "protrusion_short_side": {"value": 0.0, "unit": "mm"}, "protrusion_long_side": {"value": 0.0, "unit": "mm"},
    "piston_margin": {"value": 5.1, "unit": "mm"}, "cautions": examples.FIT_RESULT["cautions"],
}]
EXAMPLE_INTERCHANGE = [{
    "sku": "DEMO-P-0001", **_DEMO_LINE, "closeness": {"value": 0.0, "unit": "mm"},
    "differences": {"thread_end": {"value": 0.0, "unit": "mm"}, "tip": {"value": 0.0, "unit": "mm"},
                    "terminal_top": {"value": 0.0, "unit": "mm"}, "heat_range": {"value": 0.0, "unit": ""}},
    "hex_differs": False, "cautions": list(INTERCHANGE_CAUTIONS),
}]

_plug_schema = PlugSchema()


def _filters(query: dict[str, Any]) -> parts_search.PlugFilters:
    return parts_search.PlugFilters(in_stock=query["in_stock"], resistor=query.get("resistor"), hex_mm=query.get("hex"))


def _stored_plugs(session, items: list) -> dict[int, dict]:
    """The stored plugs of a page, as GET /v1/plugs/{sku} answers them (detail=full)."""
    documents = parts_search.stored_plugs(session, items)
    return {plug_id: _plug_schema.dump(document) for plug_id, document in documents.items()}


def _json(body: list[dict[str, Any]]) -> Response:
    # Written directly: the response schema documents this shape (a test loads answers
    # through it), and a marshmallow dump of a page costs more than the search.
    return Response(current_app.json.dumps(body), mimetype="application/json")


@blp.route("/heads/<string:head_id>/fitting-plugs", parameters=[HEAD_ID_PARAMETER])
class FittingPlugs(MethodView):
    @blp.doc(operationId="list_fitting_plugs")
    @blp.arguments(FittingPlugsQuerySchema, location="query")
    @blp.response(200, FittingPlugSchema(many=True), example=EXAMPLE_FITTING)
    @blp.alt_response(404, response="NOT_FOUND")
    @blp.paginate()
    def get(self, query, head_id, pagination_parameters):
        """Inventory plugs that fit this head, best first

        Every plug of the head's thread and seat is judged by the same engine as
        `POST /v1/fit-checks`; plugs that fail are left out. Clean passes come first,
        then plugs with warnings (`?include=pass` lists clean passes only). Within each
        group: closest to the chamber first (the nominal thread end's distance from the
        break-outs: |protrusion| on a flat roof, 0 between the break-outs of an inclined
        one), then the largest worst-case piston margin (tip or shell edge), then sku.

        Each entry is a counter line: sku, description, stock and bin, heat range, the
        verdict and its finding codes, both protrusions and the piston margin the
        verdict used, and the cautions. `detail=full` adds the stored plug (`plug`) and
        the whole result document (`result`), so a counter system can say why.

        Filters: `in_stock=true` (quantity_on_hand above zero), `resistor`, `hex`.
        Check options `stack`, `min_clearance`, `flush_tolerance`, `max_protrusion`,
        `max_recess`, `dynamic_allowance` as for a fit check; `units=imperial` answers in
        inches. Paginated with `page`
        and `page_size` (X-Pagination header, with the total). Torque, clearance and gap
        figures are guidance: the engine maker's service data, local regulations and
        licensed practice come first.
        """
        session = db.session()
        options = options_from({name: query.get(name) for name in
                                ("stack", "min_clearance", "flush_tolerance", "max_protrusion", "max_recess",
                                 "dynamic_allowance")})
        page = parts_search.fitting_plugs_of_head(session, head_id, options, load_catalog(), filters=_filters(query),
                                                  include=frozenset(query["include"]),
                                                  offset=pagination_parameters.first_item,
                                                  limit=pagination_parameters.page_size)
        if page is None:
            records.not_found("head", "head_id", head_id)
        pagination_parameters.item_count = page.total
        units = query["units"]
        lines = FittingLines(units, options.stack, kept=page.derived)
        body = [lines.line(item.row, item.spec, item.result) for item in page.items]
        if query["detail"] == FULL:
            plugs = _stored_plugs(session, page.items)
            documents: dict[int, dict] = {}  # plugs of one design share one result
            for line, item in zip(body, page.items, strict=True):
                document = documents.get(id(item.result))
                if document is None:
                    document = documents[id(item.result)] = result_document(item.result, units)
                line["plug"], line["result"] = plugs[item.plug_id], document
        return _json(body)


@blp.route("/plugs/<string:sku>/interchanges", parameters=[SKU_PARAMETER])
class Interchanges(MethodView):
    @blp.doc(operationId="find_interchanges")
    @blp.arguments(InterchangeQuerySchema, location="query")
    @blp.response(200, InterchangeSchema(many=True), example=EXAMPLE_INTERCHANGE)
    @blp.alt_response(404, response="NOT_FOUND")
    @blp.paginate()
    def get(self, query, sku, pagination_parameters):
        """Inventory plugs that can replace this one, closest first

        Purely dimensional: the same thread and seat, the thread end (reach less the
        installed gasket) within 0.5 mm of this plug's (the flush tolerance) and the
        tip within 0.75 mm (half the minimum clearance), both nominal; a resistor plug
        is only replaced by a resistor plug. A plug whose firing end is unknown is only
        compared with others whose firing end is unknown. A hex of another family is
        noted (`hex_differs`), not refused. No maker cross-references and no heat-range
        mapping: the heat-range difference is given only when both plugs are on the same
        named scale, and the gap is not compared; check a replacement against the head
        (fitting-plugs) for heat range, gap and boot. Ranked by closeness (|thread end
        difference| + |tip difference|), then the smallest heat-range difference, then the
        smallest terminal-top difference (unknown ones last), then same hex first, then
        sku. Each entry is a counter line (sku, description, stock and bin, heat range)
        with the differences (lengths in mm, `units=imperial`: in) and the cautions that
        go with them; `detail=full` adds the stored plug (`plug`). `thread_end_tolerance` and
        `tip_tolerance` may tighten the tolerances. Filters `in_stock`, `resistor`,
        `hex`; paginated.
        """
        session = db.session()
        tolerances = Tolerances(thread_end_mm=query.get("thread_end_tolerance", THREAD_END_TOLERANCE_MM),
                                tip_mm=query.get("tip_tolerance", TIP_TOLERANCE_MM))
        page = parts_search.interchanges_of_plug(session, sku, load_catalog(), filters=_filters(query),
                                                 tolerances=tolerances, offset=pagination_parameters.first_item,
                                                 limit=pagination_parameters.page_size)
        if page is None:
            records.not_found("plug", "sku", sku)
        pagination_parameters.item_count = page.total
        body = [interchange_line(item.row, item.spec, item.comparison, query["units"]) for item in page.items]
        if query["detail"] == FULL:
            plugs = _stored_plugs(session, page.items)
            for line, item in zip(body, page.items, strict=True):
                line["plug"] = plugs[item.plug_id]
        return _json(body)
