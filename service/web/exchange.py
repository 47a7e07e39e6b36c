"""Inventory exchange: POST /v1/imports/{plugs,heads} and GET /v1/exports/{plugs,heads}.

A shop's stock list travels as a file. An import is read in one streaming pass, every
row validated by the same schema as `POST /v1/plugs` (`service.formats.stock_file`) and
written in bulk in one transaction, committed only when no row was bad
(`service.usecases.stock`): a 422 lists every bad row by line number and column, and the
database is as it was. A file of more than PLUGFIT_MAX_IMPORT_ROWS rows is a 413 before
any row is read (larger files go through `plugfit import`). An export is the CSV that
imports back unchanged, spreadsheet formulas marked. Imports are writes (API key);
exports are reads.
"""
from __future__ import annotations

from typing import Any

from flask import Response, current_app, request
from flask.views import MethodView

from schemas.exchange import ImportQuerySchema, ImportReportSchema
from service.formats import stock_file
from service.store import db
from service.usecases import stock
from service.web import problems
from service.web.smorest import Blueprint

blp = Blueprint("inventory-exchange", __name__, url_prefix="/v1",
                description="Import and export the plug and head tables as CSV or JSON lines, all or nothing.")

EXAMPLE_PLUGS_CSV = (
    "sku,description,thread,seat,reach_mm,reach_plus_mm,reach_minus_mm,gasket_thickness_mm,firing_end_mm,"
    "hex_mm,resistor,quantity_on_hand,location\n"
    "DEMO-P-0001,house line 19 mm reach,M14x1.25,flat,19,0.1,0.1,1.5,3,16,true,12,A-03-2\n"
)
EXAMPLE_HEADS_CSV = (
    "head_id,description,thread,seat,design_reach_mm,design_reach_plus_mm,design_reach_minus_mm,"
    "piston_clearance_mm,well_bore_mm,hex_mm,resistor_required,material,intake_temperature_k\n"
    "DEMO-H-VAN-I4,Demo engine,M14x1.25,flat,19,0.15,0.15,9,25,16,true,aluminium,308.15\n"
)
EXAMPLE_PLUGS_JSONL = ('{"sku": "DEMO-P-0001", "thread": "M14x1.25", "seat": "flat", '
                       '"reach": {"value": 19, "unit": "mm", "tol": 0.1}, "quantity_on_hand": 12}\n')
EXAMPLE_REPORT = {"resource": "plugs", "mode": "upsert", "rows": 1, "added": 1, "changed": 0, "unchanged": 0,
                  "deleted": 0, "dry_run": False}


def _request_body(resource: str) -> dict[str, Any]:
    return {
        "required": True,
        "description": f"The {resource} file: CSV with a header row (columns in docs/parts-counter.md, section "
                       "'Inventory exchange'; an export is a valid import), or JSON lines with one "
                       f"{resource[:-1]} object per line in the same shape as the REST API's "
                       "(`application/x-ndjson`; `application/jsonl` is accepted too). UTF-8.",
        "content": {
            # Raw bytes (`format: binary`), as generators expect a file body to be declared.
            # CSV last: openapi-python-client makes one `File` body for both and sends it
            # with the media type declared last (docs/api.md, Generating a client).
            stock_file.JSON_LINES_MEDIA_TYPES[0]: {"schema": {"type": "string", "format": "binary"},
                                                  "example": EXAMPLE_PLUGS_JSONL},
            stock_file.CSV_MEDIA_TYPE: {"schema": {"type": "string", "format": "binary"},
                                        "example": EXAMPLE_PLUGS_CSV if resource == "plugs" else EXAMPLE_HEADS_CSV},
        },
    }


def _import(resource: str, query: dict[str, Any]) -> dict[str, Any]:
    media_type = request.mimetype
    accepted = (stock_file.CSV_MEDIA_TYPE, *stock_file.JSON_LINES_MEDIA_TYPES)
    if media_type not in accepted:
        problems.abort(415, f"The file was sent as {media_type or 'no content type'}; send it as "
                            "'Content-Type: text/csv' or 'Content-Type: application/x-ndjson' (JSON lines).")
    fmt = stock_file.format_for(resource)
    data = request.get_data(cache=False)
    cap = current_app.config["MAX_IMPORT_ROWS"]
    rows = stock_file.more_rows_than(data, media_type, cap)
    if rows is not None:  # before any row is read: the refusal costs one pass over the bytes
        problems.abort(413, f"The file holds {rows} rows; an import over HTTP holds at most {cap} "
                            "(setting PLUGFIT_MAX_IMPORT_ROWS). Nothing was written. Import a larger file on the "
                            f"server with `plugfit import {resource} FILE`, which takes any size, or send it "
                            "in parts.", slug="too-many-rows", limit=cap)
    reader = stock_file.RowReader(fmt)
    session = db.session()
    try:
        outcome = stock.import_rows(session, resource, stock_file.rows_of(data, media_type, reader),
                                    query["mode"], keys=reader.first_line)
    except stock_file.FileUnusable as unusable:
        session.rollback()
        problems.abort(422, str(unusable), errors=unusable.errors, slug="file-unusable")
    if not outcome.ok:
        session.rollback()
        listed = len(outcome.errors)
        more = (f" The first {listed} are listed." if listed < outcome.bad_rows else "")
        problems.abort(422, f"{outcome.bad_rows} row(s) cannot be imported, so nothing was written; "
                            f"errors are keyed by line number, then column.{more}",
                       errors=outcome.errors)
    report = outcome.report
    report.dry_run = query["dry_run"]
    if report.dry_run:
        session.rollback()
    else:
        session.commit()
    return report.as_dict()


def _export(resource: str) -> Response:
    fmt = stock_file.format_for(resource)
    database = db.get_database()

    def lines():
        # The rows are read while the answer streams, after the request's own session
        # has been closed at teardown; reading them through that session would open a
        # new connection nothing closes (a pool exhausted after a few dozen exports).
        # The stream's own session is closed when it ends or the server closes it.
        with database.unit_of_work() as session:
            yield from stock_file.csv_lines(stock.export_documents(session, resource), fmt)

    return Response(lines(), mimetype=stock_file.CSV_MEDIA_TYPE,
                    headers={"Content-Disposition": f'attachment; filename="{resource}.csv"'})


@blp.route("/imports/plugs")
class PlugImport(MethodView):
    @blp.doc(operationId="import_plugs")
    @blp.arguments(ImportQuerySchema, location="query")
    @blp.doc(requestBody=_request_body("plugs"))
    @blp.response(200, ImportReportSchema, example=EXAMPLE_REPORT)
    @blp.alt_response(413, response="REQUEST_ENTITY_TOO_LARGE")
    @blp.alt_response(415, response="UNSUPPORTED_MEDIA_TYPE")
    def post(self, query):
        """Import plugs from CSV or JSON lines

        Columns as `GET /v1/exports/plugs` writes them; a stock line's quantity_on_hand
        and location travel with it. `?mode=upsert` (default) adds new records and
        overwrites changed ones; equal records are left untouched. `?mode=replace` makes
        the file the whole table: records it does not name are deleted. One transaction:
        if any row is bad, nothing is written and the 422 problem's `errors` lists every
        bad row by line number and column (JSON lines: by field), e.g.
        `{"7": {"reach_mm": ["must be at most 60 mm"]}}`. A key that appears twice is an
        error on its second line. `?dry_run=true` validates and counts without writing.
        At most PLUGFIT_MAX_IMPORT_ROWS data rows (default 50,000): more is a 413 before
        any row is read; `plugfit import` takes larger files. Needs an API key.
        """
        return _import("plugs", query)


@blp.route("/imports/heads")
class HeadImport(MethodView):
    @blp.doc(operationId="import_heads")
    @blp.arguments(ImportQuerySchema, location="query")
    @blp.doc(requestBody=_request_body("heads"))
    @blp.response(200, ImportReportSchema, example={**EXAMPLE_REPORT, "resource": "heads"})
    @blp.alt_response(413, response="REQUEST_ENTITY_TOO_LARGE")
    @blp.alt_response(415, response="UNSUPPORTED_MEDIA_TYPE")
    def post(self, query):
        """Import heads from CSV or JSON lines

        Columns as `GET /v1/exports/heads` writes them. Modes, dry run and errors as for
        `POST /v1/imports/plugs`: all or nothing, every bad row listed by line and column.
        Needs an API key.
        """
        return _import("heads", query)


_EXPORT_RESPONSE = {"type": "string", "description": "CSV, UTF-8, one header row; imports back unchanged"}


@blp.route("/exports/plugs")
class PlugExport(MethodView):
    @blp.doc(operationId="export_plugs")
    @blp.response(200, _EXPORT_RESPONSE, content_type=stock_file.CSV_MEDIA_TYPE, example=EXAMPLE_PLUGS_CSV)
    def get(self):
        """Export every plug as CSV

        Ordered by sku. Each length is three columns: `<name>_mm` and its tolerance in
        `<name>_plus_mm` and `<name>_minus_mm` (empty when exact); stock in
        quantity_on_hand and location. `POST /v1/imports/plugs` reads it back unchanged.
        """
        return _export("plugs")


@blp.route("/exports/heads")
class HeadExport(MethodView):
    @blp.doc(operationId="export_heads")
    @blp.response(200, _EXPORT_RESPONSE, content_type=stock_file.CSV_MEDIA_TYPE, example=EXAMPLE_HEADS_CSV)
    def get(self):
        """Export every head as CSV

        Ordered by head_id; lengths as in the plug export, engine conditions in columns
        named with their unit (`intake_pressure_bar` absolute, `boost_pressure_bar` gauge,
        `intake_temperature_k`).
        `POST /v1/imports/heads` reads it back unchanged.
        """
        return _export("heads")
