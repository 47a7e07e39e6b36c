"""The document of GET /v1/standard-sizes, as built by
`service.catalog_loader.catalog_as_document`. The endpoint sends that document as is; a
test loads it through this schema (unknown members refused) so they cannot drift apart."""
from __future__ import annotations

from marshmallow import RAISE, Schema, fields


class _Strict(Schema):
    class Meta:
        unknown = RAISE


class BasicDiametersSchema(_Strict):
    pitch_diameter_mm = fields.Float(required=True)
    minor_diameter_mm = fields.Float(required=True)
    external_root_diameter_mm = fields.Float(required=True)
    source = fields.String(required=True)


class ThreadLimitsSchema(_Strict):
    external_major_mm = fields.List(fields.Float(), required=True, metadata={"description": "[min, max]"})
    external_pitch_mm = fields.List(fields.Float(), required=True)
    internal_pitch_mm = fields.List(fields.Float(), required=True)
    internal_minor_mm = fields.List(fields.Float(), required=True)
    source = fields.String(required=True)


class PlugThreadLimitsSchema(_Strict):
    thread_class = fields.String(required=True, metadata={
        "example": "6e", "description": "ISO 965-1 class of the plug's shell thread (6e: the looser, where unsure)"})
    external_major_mm = fields.List(fields.Float(), required=True, metadata={"description": "[min, max]"})
    external_pitch_mm = fields.List(fields.Float(), required=True)
    source = fields.String(required=True)


class StandardReachSchema(_Strict):
    seat = fields.String(required=True)
    reach_mm = fields.Float(required=True)
    tolerance_mm = fields.Float(allow_none=True, required=True)
    label = fields.String(required=True)
    source = fields.String(required=True)


class StandardThreadSchema(_Strict):
    designation = fields.String(required=True, metadata={"example": "M14x1.25"})
    nominal_diameter_mm = fields.Float(required=True)
    pitch_mm = fields.Float(required=True)
    seats = fields.List(fields.String(), required=True)
    standard_gasket_mm = fields.Float(allow_none=True, required=True)
    plug_thread_class = fields.String(required=True, metadata={"example": "6e"})
    source = fields.String(required=True)
    basic_diameters = fields.Nested(BasicDiametersSchema, required=True)
    limits_6g_6H = fields.Nested(ThreadLimitsSchema, required=True)
    plug_thread_limits = fields.Nested(PlugThreadLimitsSchema, required=True)
    reaches = fields.List(fields.Nested(StandardReachSchema), required=True)


class StandardHexSchema(_Strict):
    across_flats_mm = fields.Float(required=True)
    family = fields.String(required=True)
    label = fields.String(required=True)
    form = fields.String(required=True, metadata={"example": "six-point", "description": "six-point or "
                                                  "twelve-point (bi-hex): the socket is sized for this form"})
    across_corners_mm = fields.Float(required=True)
    socket_od_mm = fields.Float(required=True)
    source = fields.String(required=True)


class HexFamilySchema(_Strict):
    family = fields.String(required=True)
    members = fields.List(fields.String(), required=True)


class StatedTorqueSchema(_Strict):
    min = fields.Float(required=True)
    max = fields.Float(required=True)
    unit = fields.String(required=True, metadata={"example": "N*m"})


class TorqueGuideSchema(_Strict):
    thread = fields.String(required=True)
    seat = fields.String(required=True)
    material = fields.String(required=True)
    min_nm = fields.Float(required=True, metadata={"description": "clean, dry threads"})
    max_nm = fields.Float(required=True)
    unit = fields.String(required=True)
    as_stated = fields.Nested(StatedTorqueSchema, allow_none=True, required=True, metadata={
        "description": "the range in the unit its source gives it in; planned torques are compared there"})
    turn_angle_deg = fields.Float(allow_none=True, required=True)
    turn_angle_note = fields.String(required=True, metadata={"example": "after finger-tight, with a new gasket"})
    reused_gasket_turn_angle_deg = fields.Float(allow_none=True, required=True)
    source = fields.String(required=True)


class StandardSizesSchema(_Strict):
    """The neutral catalogue: thread sizes with their reaches, hexes, torque guidance,
    and the source of every value. Torque figures are guidance: the engine maker's
    service data, local regulations and licensed practice come first."""

    catalog_version = fields.String(required=True, metadata={"example": "fbcb0fa264fd"})
    threads = fields.List(fields.Nested(StandardThreadSchema), required=True)
    hexes = fields.List(fields.Nested(StandardHexSchema), required=True)
    hex_families = fields.List(fields.Nested(HexFamilySchema), required=True)
    torque = fields.List(fields.Nested(TorqueGuideSchema), required=True)
    sources = fields.Dict(keys=fields.String(), values=fields.String(), required=True)
    cautions = fields.List(fields.String(), required=True)
