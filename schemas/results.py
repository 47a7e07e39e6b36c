"""The result of a check: the documented schema of the contract's result document.

`FitResultSchema` documents it in the OpenAPI spec; `service.formats.result_json`
writes it (plain Python and orjson rather than a marshmallow dump, because a batch of
10,000 lines must be written in milliseconds). A test loads the writer's output through
`FitResultSchema`, so the two cannot drift apart.
"""
from __future__ import annotations

from typing import Any

from marshmallow import Schema, fields, validate

from service.fitment.checks import CHECK_NAMES
from service.fitment.codes import FINDING_CODES
from service.fitment.defaults import LUBRICATIONS

from .fields import QuantitySchema

VERDICTS = ("pass", "warn", "fail")
SEVERITIES = ("info", "warn", "fail")
UNIT_SYSTEMS = ("metric", "imperial")
GEOMETRY_ENTRIES = ("protrusion_short_side", "protrusion_long_side", "tip_position", "piston_margin", "valve_margin",
                    "insert_protrusion_short_side", "insert_protrusion_long_side")


class FindingSchema(Schema):
    # Open strings, not enums: codes and checks are added over time (the contract says so),
    # and a client generated before a new code must still read the answer that carries it.
    code = fields.String(required=True, metadata={
        "example": "REACH_LONG",
        "description": "stable; clients switch on it (docs/engineering.md, Finding codes): "
                       f"{', '.join(FINDING_CODES)}. Codes may be added: treat an unknown one by its severity."})
    check = fields.String(required=True, metadata={
        "example": "reach", "description": f"the check that made the finding: {', '.join(CHECK_NAMES)}; "
                                           "checks may be added"})
    severity = fields.String(required=True, validate=validate.OneOf(SEVERITIES))
    message = fields.String(required=True)
    values = fields.Dict(keys=fields.String(), values=fields.Nested(QuantitySchema), required=True)


class GeometryEntrySchema(Schema):
    nominal = fields.Float(required=True)
    min = fields.Float(required=True, metadata={"description": "worst case: every tolerance at its limit"})
    max = fields.Float(required=True)
    rss_min = fields.Float(required=True, metadata={"description": "nominal - root-sum-square of tolerances"})
    rss_max = fields.Float(required=True)
    unit = fields.String(required=True, metadata={"example": "mm"})


class GeometrySchema(Schema):
    protrusion_short_side = fields.Nested(GeometryEntrySchema, metadata={
        "description": "thread end minus port depth (short side): positive, plug threads stand into the chamber; "
                       "negative, head threads are left bare. REACH_SHORT reads its low bound"})
    protrusion_long_side = fields.Nested(GeometryEntrySchema, metadata={
        "description": "thread end minus the long side's port depth; equals protrusion_short_side on a flat roof. "
                       "REACH_LONG reads its high bound"})
    tip_position = fields.Nested(GeometryEntrySchema, metadata={"description": "from the seat face"})
    piston_margin = fields.Nested(GeometryEntrySchema, metadata={
        "description": "the smaller, bound by bound, of the electrode tip's and the shell edge's margins to the "
                       "piston crown (analysis.piston says which governs)"})
    valve_margin = fields.Nested(GeometryEntrySchema, metadata={"description": "the electrode tip's"})
    insert_protrusion_short_side = fields.Nested(GeometryEntrySchema, metadata={
        "description": "a thread insert's length minus the port depth (short side): positive, the insert stands "
                       "into the chamber; negative, the head's tapped thread is bare past its end. INSERT_SHORT "
                       "reads its low bound"})
    insert_protrusion_long_side = fields.Nested(GeometryEntrySchema, metadata={
        "description": "the insert's length minus the long side's port depth. INSERT_PROUD reads its high bound"})


_QUANTITY_JSON_SCHEMA = {"type": "object", "required": ["value", "unit"],
                         "properties": {"value": {"type": "number"}, "unit": {"type": "string"}}}


class AnalysisEntry(fields.Field):
    """One computed quantity (`{"value", "unit"}`), or a name such as the piston margin's
    governing feature."""

    def __init__(self, **kwargs: Any) -> None:
        metadata = {"oneOf": [_QUANTITY_JSON_SCHEMA, {"type": "string"}], **kwargs.pop("metadata", {})}
        super().__init__(metadata=metadata, **kwargs)

    def _deserialize(self, value: Any, attr: str | None, data: Any, **kwargs: Any) -> Any:
        if isinstance(value, str):
            return value
        return QuantitySchema().load(value)


class TorqueSchema(Schema):
    min = fields.Float(required=True, metadata={"description": "for the stated lubrication (lowered from the "
                                                                "dry range for oiled or anti-seize threads)"})
    max = fields.Float(required=True)
    unit = fields.String(required=True, metadata={"example": "N*m"})
    lubrication = fields.String(required=True, validate=validate.OneOf(LUBRICATIONS), metadata={
        "description": "what the range is for: the request's lubrication option, dry when not given"})
    turn_angle_deg = fields.Float(allow_none=True, metadata={"description": "see turn_angle_note"})
    turn_angle_note = fields.String(required=True, metadata={"example": "after finger-tight, with a new gasket"})
    reused_gasket_turn_angle_deg = fields.Float(allow_none=True, metadata={
        "description": "flat seat: after finger-tight with a re-used (already crushed) gasket"})
    source = fields.String(required=True)


class FitResultSchema(Schema):
    verdict = fields.String(required=True, validate=validate.OneOf(VERDICTS))
    thread = fields.String(required=True, metadata={"example": "M14x1.25"})
    findings = fields.List(fields.Nested(FindingSchema), required=True)
    geometry = fields.Nested(GeometrySchema, required=True)
    analysis = fields.Dict(keys=fields.String(),
                           values=fields.Dict(keys=fields.String(), values=AnalysisEntry()),
                           required=True, metadata={
                               "description": "what each check computed: quantities, and for the piston check its "
                                              "governing_feature (tip or shell_edge), tip_margin and "
                                              "shell_edge_margin at the bound the verdict reads; for the "
                                              "thread strength of a port with an insert its "
                                              "governing_interface (insert_in_head or plug_in_insert); for the "
                                              "seat diameter the hex_form (six-point or twelve-point)"})
    torque = fields.Nested(TorqueSchema, allow_none=True, required=True)
    assumptions = fields.List(fields.String(), required=True)
    cautions = fields.List(fields.String(), required=True)
    engine_version = fields.String(required=True)
    catalog_version = fields.String(required=True)
