"""Query strings and answers of the parts-counter searches: fitting plugs and interchanges."""
from __future__ import annotations

from marshmallow import Schema, fields, validate
from webargs.fields import DelimitedList

from service.fitment.codes import FINDING_CODES
from service.fitment.defaults import STACKS
from service.fitment.search import THREAD_END_TOLERANCE_MM, TIP_TOLERANCE_MM

from .answers import PlugSchema
from .fields import Choice, Quantity, QuantitySchema
from .results import UNIT_SYSTEMS, FitResultSchema
from .specs import HeatRangeSchema

INCLUDE = ("pass", "warn")
SUMMARY, FULL = "summary", "full"
DETAILS = (SUMMARY, FULL)


class StockFilterSchema(Schema):
    in_stock = fields.Boolean(load_default=False, metadata={
        "description": "true: only plugs with quantity_on_hand above zero"})
    resistor = fields.Boolean(metadata={"description": "only resistor plugs (true) or only plugs without (false)"})
    hex = Quantity("length", minimum=0.0, maximum=100.0, bare_unit="mm", metadata={
        "description": "only this hex, across flats; matches within 0.3 mm, so 16 finds 5/8 in"})
    units = Choice(UNIT_SYSTEMS, {"si": "metric", "us": "imperial", "inch": "imperial"}, load_default="metric",
                   metadata={"description": "metric (mm, N*m) or imperial (in, lbf*ft)"})
    detail = Choice(DETAILS, load_default=SUMMARY, metadata={
        "description": "summary (default): one counter line per plug; full: each line also carries the "
                       "stored plug (`plug`) and, for fitting plugs, the whole result document (`result`)"})


class FittingPlugsQuerySchema(StockFilterSchema):
    include = DelimitedList(Choice(INCLUDE), load_default=lambda: list(INCLUDE), metadata={
        "description": "which verdicts to list, comma-separated: `pass` lists clean passes only; "
                       "the default lists passes, then warnings. Failures are never listed."})
    stack = Choice(STACKS, {"worst-case": "worst_case", "worstcase": "worst_case"}, load_default="worst_case",
                   metadata={"description": "worst_case (default) or rss bounds for the verdicts"})
    min_clearance = Quantity("length", minimum=0.0, maximum=50.0, bare_unit="mm",
                             metadata={"description": "default 1.5 mm (common practice)"})
    flush_tolerance = Quantity("length", minimum=0.0, maximum=10.0, bare_unit="mm",
                               metadata={"description": "default 0.5 mm (common practice)"})
    max_protrusion = Quantity("length", minimum=0.0, maximum=10.0, bare_unit="mm", metadata={
        "description": "REACH_LONG fails above it; default one pitch of the head's thread"})
    max_recess = Quantity("length", minimum=0.0, maximum=20.0, bare_unit="mm", metadata={
        "description": "REACH_SHORT fails below minus it; default two pitches of the head's thread"})
    dynamic_allowance = Quantity("length", minimum=0.0, maximum=10.0, bare_unit="mm", metadata={
        "description": "taken from the piston and valve margins; default: for the piston, the running allowance "
                       "estimated from the head's max_rpm and rod when it gives them, otherwise 0 mm"})


class InterchangeQuerySchema(StockFilterSchema):
    thread_end_tolerance = Quantity("length", minimum=0.0, maximum=THREAD_END_TOLERANCE_MM, bare_unit="mm",
                                    metadata={"description": f"default {THREAD_END_TOLERANCE_MM:g} mm "
                                                             "(the flush tolerance); may only be tightened"})
    tip_tolerance = Quantity("length", minimum=0.0, maximum=TIP_TOLERANCE_MM, bare_unit="mm",
                             metadata={"description": f"default {TIP_TOLERANCE_MM:g} mm (half the minimum "
                                                      "clearance); may only be tightened"})


class CounterLineSchema(Schema):
    """The inventory line as a counter lists it: what the clerk fetches from the shelf."""

    sku = fields.String(required=True, metadata={"example": "DEMO-P-0001"})
    description = fields.String(required=True, allow_none=True)
    quantity_on_hand = fields.Integer(required=True, metadata={"description": "stock"})
    location = fields.String(required=True, allow_none=True, metadata={"description": "the bin"})
    heat_range = fields.Nested(HeatRangeSchema, required=True, allow_none=True, metadata={
        "description": "the plug's heat range as stored (null when not given)"})
    plug = fields.Nested(PlugSchema, metadata={"description": "detail=full only: the stored plug"})


class FittingPlugSchema(CounterLineSchema):
    """One plug that fits the head: the counter line, and with `detail=full` the whole documents."""

    verdict = fields.String(required=True, validate=validate.OneOf(INCLUDE), metadata={
        "description": "pass or warn (failures are not listed)"})
    # Open strings, as in the result document's findings: codes are added over time.
    codes = fields.List(fields.String(), required=True, metadata={
        "description": "the codes of the check's findings, each once, the most severe first (warn, then "
                       f"info): {', '.join(FINDING_CODES)}; codes may be added. `detail=full` gives the "
                       "findings themselves"})
    protrusion_short_side = fields.Nested(QuantitySchema, required=True, allow_none=True, metadata={
        "description": "nominal thread end less the port depth (short side): positive, the plug's threads "
                       "stand into the chamber; negative, head threads are exposed. null: not known"})
    protrusion_long_side = fields.Nested(QuantitySchema, required=True, allow_none=True, metadata={
        "description": "the same against the port depth on the long side (equal on a flat roof)"})
    piston_margin = fields.Nested(QuantitySchema, required=True, allow_none=True, metadata={
        "description": "the piston margin the verdict used: its worst case (min; rss_min with stack=rss). "
                       "null: the head gives no piston data"})
    cautions = fields.List(fields.String(), required=True, metadata={
        "description": "torque, clearance and gap figures are guidance: the engine maker's data comes first"})
    result = fields.Nested(FitResultSchema, metadata={
        "description": "detail=full only: the fit check of this plug in this head, as POST /v1/fit-checks "
                       "answers it"})


class DifferencesSchema(Schema):
    thread_end = fields.Nested(QuantitySchema, required=True, metadata={
        "description": "candidate minus original: positive means its threads end deeper in the port"})
    tip = fields.Nested(QuantitySchema, allow_none=True, required=True, metadata={
        "description": "tip position, candidate minus original; null when neither gives a firing end"})
    terminal_top = fields.Nested(QuantitySchema, allow_none=True, required=True, metadata={
        "description": "terminal top above the seat face, candidate minus original (ranks candidates, "
                       "decides nothing: the boot check against the head does); null when a terminal height "
                       "is missing"})
    heat_range = fields.Nested(QuantitySchema, allow_none=True, required=True, metadata={
        "description": "heat range, candidate minus original, when both are on the same named scale (ranks "
                       "candidates, decides nothing: which way a scale counts is the maker's); null when a heat "
                       "range is missing or the scales differ: scales are never mapped onto each other"})


class InterchangeSchema(CounterLineSchema):
    """One plug that can replace the original: the counter line and how it differs."""

    closeness = fields.Nested(QuantitySchema, required=True, metadata={
        "description": "|thread end difference| + |tip difference|: the ranking, smallest first"})
    differences = fields.Nested(DifferencesSchema, required=True)
    hex_differs = fields.Boolean(allow_none=True, required=True, metadata={
        "description": "true: another hex family than the original (have the socket); null: a hex is unknown"})
    cautions = fields.List(fields.String(), required=True, metadata={
        "description": "compared by dimensions only: heat-range differences are shown, not judged, and the gap "
                       "is not compared; the engine maker's data comes first"})
