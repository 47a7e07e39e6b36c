"""POST /v1/fit-checks/batch: a build list, as JSON or CSV, checked line by line.

A computation, not a change: a read (open unless the operator makes reads need a key).
The body is read here rather than by webargs because a CSV body is not JSON and one
bad item must not refuse the whole list; `service.formats.build_list` reads the file and
`service.usecases.batch` loads every item through `schemas.batch.BatchItemSchema`.
"""
from __future__ import annotations

from typing import Any

from flask import Response, current_app, request
from flask.views import MethodView
from webargs import core

from schemas.batch import BatchQuerySchema, BatchRequestSchema, BatchResponseSchema
from service.catalog_loader import load_catalog
from service.formats.build_list import (
    CSV_MEDIA_TYPES,
    BuildListError,
    NotJson,
    TooManyItems,
    decode,
    read_csv,
    read_json_text,
)
from service.store import db
from service.store.repository import fetch_documents
from service.usecases.batch import run_batch
from service.web import auth, problems
from service.web.smorest import Blueprint

blp = Blueprint("build-lists", __name__, url_prefix="/v1/fit-checks",
                description="Build lists: many checks in one request, from JSON or CSV, for CI.")

EXAMPLE_REQUEST = {"items": [
    {"ref": "demo-twin-front", "plug": {"thread": "M14x1.25", "seat": "flat", "reach": 19.0,
                                        "gasket_thickness": 1.5, "firing_end": 4.0},
     "head": {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5, "piston_clearance": 8.0},
     "options": {"torque": "20 ft-lb"}},
    {"ref": "demo-twin-rear", "plug": {"sku": "EXAMPLE-P-0001"}, "head": {"head_id": "EXAMPLE-HEAD-1"},
     "waive": [{"codes": ["HEX_DIFFERS"], "reason": "demo: the shop's socket set covers both hexes"}]},
]}

EXAMPLE_CSV = (
    "ref,plug_thread,plug_seat,plug_reach_mm,plug_gasket_thickness_mm,plug_firing_end_mm,"
    "head_thread,head_seat,head_port_depth_mm,head_piston_clearance_mm,torque,waive\n"
    "demo-twin-front,M14x1.25,flat,19,1.5,4,M14x1.25,flat,17.5,8,20 ft-lb,\n"
    "demo-twin-rear,M14x1.25,flat,26.5,1.5,4,M14x1.25,flat,17.5,20,,REACH_LONG: demo: relieved piston\n"
)

EXAMPLE_RESPONSE = {
    "summary": {"total": 2, "pass": 1, "warn": 0, "fail": 0, "invalid": 1, "verdict": "fail"},
    "results": [
        {"ref": "demo-twin-front", "verdict": "pass", "thread": "M14x1.25", "findings": [],
         "geometry": {"piston_margin": {"nominal": 4.0, "min": 4.0, "max": 4.0, "rss_min": 4.0,
                                        "rss_max": 4.0, "unit": "mm"}},
         "analysis": {}, "torque": None, "assumptions": [], "cautions": [
             ("Torque, clearance and gap values are guidance: the engine maker's service data, local "
             "regulations and licensed practice come first.")],
         "engine_version": "2.2.0", "catalog_version": "0123456789ab", "waivers": []},
        {"ref": "demo-twin-rear", "verdict": "invalid", "errors": {"plug": {"sku": [("no plug with sku "
                                                                                    "'EXAMPLE-P-0001'")]}}},
    ],
}

_REQUEST_BODY = {
    "required": True,
    "description": "The build list: the JSON document below, or CSV (`Content-Type: text/csv`) with a "
                   "header row and one line per check; the CSV columns are listed in docs/build-lists.md "
                   "(section 'Build lists'). At most PLUGFIT_MAX_BATCH_ITEMS items (default 50,000).",
    "content": {
        "application/json": {"schema": BatchRequestSchema, "example": EXAMPLE_REQUEST},
        "text/csv": {"schema": {"type": "string", "format": "binary", "description": "CSV build list, UTF-8"},
                     "example": EXAMPLE_CSV},
    },
}


def fetch_references(skus: set[str], head_ids: set[str]) -> tuple[dict[str, dict], dict[str, dict]]:
    """Every referenced plug and head, in one query each (per few thousand ids)."""
    return fetch_documents(db.session(), skus, head_ids)


def _read_body(limit: int) -> list:
    mimetype = request.mimetype
    is_csv = mimetype in CSV_MEDIA_TYPES
    if not is_csv and not core.is_json(mimetype):
        problems.abort(415, f"The body was sent as {mimetype or 'no content type'}; send the build list as "
                            "'Content-Type: application/json' or 'Content-Type: text/csv'.")
    try:
        text = decode(request.get_data(cache=False))
        return read_csv(text, max_items=limit) if is_csv else read_json_text(text, max_items=limit)
    except TooManyItems:
        problems.abort(413, f"A batch may hold at most {limit} items (setting PLUGFIT_MAX_BATCH_ITEMS); "
                            "split the build list.", slug="too-many-items", limit=limit)
    except BuildListError as error:
        problems.abort(400 if isinstance(error, NotJson) else 422, f"The build list cannot be used: {error}",
                       errors=error.errors())


@blp.route("/batch")
class FitCheckBatch(MethodView):
    @blp.doc(operationId="check_build_list")
    @auth.access(auth.READ)
    @blp.arguments(BatchQuerySchema, location="query")
    @blp.doc(requestBody=_REQUEST_BODY)
    @blp.response(200, BatchResponseSchema, example=EXAMPLE_RESPONSE)
    @blp.alt_response(400, response="BAD_REQUEST")
    @blp.alt_response(413, response="REQUEST_ENTITY_TOO_LARGE")
    @blp.alt_response(415, response="UNSUPPORTED_MEDIA_TYPE")
    def post(self, query: dict[str, Any]):
        """Check a build list

        One result per item, in input order, each with its `ref` and the same result
        document as `POST /v1/fit-checks` (findings a waiver accepted are moved under
        `waivers` with the reason and do not count), or `verdict: invalid` with
        `errors` when the item cannot be read or names an unknown `sku`/`head_id`; the
        other items are still checked. The summary's verdict is fail when any item
        fails or is invalid. `?require=piston,valve` turns NOT_CHECKED for those checks
        into a fail on every item; `?units=imperial` answers in inches and lbf*ft.
        More than PLUGFIT_MAX_BATCH_ITEMS items (default 50,000): 413. Torque,
        clearance and gap figures are guidance: the engine maker's service data, local
        regulations and licensed practice come first.
        """
        raw_items = _read_body(current_app.config["MAX_BATCH_ITEMS"])
        answer = run_batch(raw_items, load_catalog(), fetch_references, units=query["units"],
                           require=query["require"])
        # Written as JSON directly: BatchResponseSchema documents this shape (a test loads
        # the answer through it); a marshmallow dump of 10,000 results takes seconds.
        return Response(answer.to_json(), mimetype="application/json")
