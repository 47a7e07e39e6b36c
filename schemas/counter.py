"""Query strings and answers of the parts-counter searches: fitting plugs and interchanges."""
from __future__ import annotations

from marshmallow import Schema, fields
from webargs.fields import DelimitedList

from service.fitment.defaults import STACKS
from service.fitment.interchange import THREAD_END_TOLERANCE_MM, TIP_TOLERANCE_MM

from .answers import PlugSchema
from .fields import Choice, Quantity
from .results import UNIT_SYSTEMS, FitResultSchema, QuantitySchema

INCLUDE = ("pass", "warn")


class StockFilterSchema(Schema):
    in_stock = fields.Boolean(load_default=False, metadata={
        "description": "true: only plugs with quantity_on_hand above zero"})
    resistor = fields.Boolean(metadata={"description": "only resistor plugs (true) or only plugs without (false)"})
    hex = Quantity("length", minimum=0.0, maximum=100.0, bare_unit="mm", metadata={
        "description": "only this hex, across flats; matches within 0.3 mm, so 16 finds 5/8 in"})
    units = Choice(UNIT_SYSTEMS, {"si": "metric", "us": "imperial", "inch": "imperial"}, load_default="metric",
                   metadata={"description": "metric (mm, N*m) or imperial (in, lbf*ft)"})


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
    dynamic_allowance = Quantity("length", minimum=0.0, maximum=10.0, bare_unit="mm",
                                 metadata={"description": "default 0 mm"})


class InterchangeQuerySchema(StockFilterSchema):
    thread_end_tolerance = Quantity("length", minimum=0.0, maximum=THREAD_END_TOLERANCE_MM, bare_unit="mm",
                                    metadata={"description": f"default {THREAD_END_TOLERANCE_MM:g} mm "
                                                             "(the flush tolerance); may only be tightened"})
    tip_tolerance = Quantity("length", minimum=0.0, maximum=TIP_TOLERANCE_MM, bare_unit="mm",
                             metadata={"description": f"default {TIP_TOLERANCE_MM:g} mm (half the minimum "
                                                      "clearance); may only be tightened"})


class FittingPlugSchema(Schema):
    sku = fields.String(required=True, metadata={"example": "DEMO-P-0001"})
    verdict = fields.String(required=True, metadata={"description": "pass or warn (failures are not listed)"})
    plug = fields.Nested(PlugSchema, required=True, metadata={"description": "the inventory line, with stock"})
    result = fields.Nested(FitResultSchema, required=True, metadata={
        "description": "the fit check of this plug in this head, as POST /v1/fit-checks answers it"})


class DifferencesSchema(Schema):
    thread_end = fields.Nested(QuantitySchema, required=True, metadata={
        "description": "candidate minus original: positive means its threads end deeper in the port"})
    tip = fields.Nested(QuantitySchema, allow_none=True, required=True, metadata={
        "description": "tip position, candidate minus original; null when neither gives a firing end"})
    terminal_top = fields.Nested(QuantitySchema, allow_none=True, required=True, metadata={
        "description": "terminal top above the seat face, candidate minus original (not a criterion: "
                       "the boot check against the head decides); null when a terminal height is missing"})


class InterchangeSchema(Schema):
    sku = fields.String(required=True, metadata={"example": "DEMO-P-0171"})
    closeness = fields.Nested(QuantitySchema, required=True, metadata={
        "description": "|thread end difference| + |tip difference|: the ranking, smallest first"})
    differences = fields.Nested(DifferencesSchema, required=True)
    hex_differs = fields.Boolean(allow_none=True, required=True, metadata={
        "description": "true: another hex family than the original (have the socket); null: a hex is unknown"})
    plug = fields.Nested(PlugSchema, required=True)
