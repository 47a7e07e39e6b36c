"""The result of a check: its documented schema and the serialiser that writes it.

`FitResultSchema` documents the contract's result document in the OpenAPI spec;
`result_document` writes it. The writer is plain Python rather than a marshmallow dump
because a batch of 10,000 lines must serialise in milliseconds; a test loads the
writer's output through `FitResultSchema` so the two cannot drift apart.
"""
from __future__ import annotations

from typing import Any

from marshmallow import Schema, fields, validate

from service.fitment.checks import CHECK_NAMES
from service.fitment.codes import FINDING_CODES
from service.fitment.model import Bounds, FitResult
from service.units import from_canonical, output_unit

VERDICTS = ("pass", "warn", "fail")
SEVERITIES = ("info", "warn", "fail")
UNIT_SYSTEMS = ("metric", "imperial")
GEOMETRY_ENTRIES = ("thread_protrusion", "thread_recess", "tip_position", "piston_margin", "valve_margin")

# Digits kept in numbers and shown in messages, per output unit: micrometres in mm,
# ten-thousandths in inches (the resolution of the trade's gauges).
_DIGITS = {"mm": 4, "in": 5}
_MESSAGE_FORMAT = {"mm": "{:.2f} mm", "in": "{:.3f} in", "N*m": "{:.1f} N*m", "lbf*ft": "{:.1f} lbf*ft",
                   "kV": "{:.1f} kV", "bar": "{:.2f} bar", "psi": "{:.1f} psi", "N": "{:.0f} N",
                   "lbf": "{:.0f} lbf", "MPa": "{:.0f} MPa", "mm**2": "{:.1f} mm**2", "in**2": "{:.4f} in**2",
                   "K": "{:.0f} K", "deg": "{:.1f} deg", "": "{:.2f}"}


class QuantitySchema(Schema):
    value = fields.Float(required=True)
    unit = fields.String(required=True, metadata={"example": "mm"})


class FindingSchema(Schema):
    code = fields.String(required=True, validate=validate.OneOf(tuple(FINDING_CODES)), metadata={
        "example": "REACH_LONG", "description": "stable; clients switch on it (README: Finding codes)"})
    check = fields.String(required=True, validate=validate.OneOf(CHECK_NAMES), metadata={"example": "reach"})
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
    thread_protrusion = fields.Nested(GeometryEntrySchema)
    thread_recess = fields.Nested(GeometryEntrySchema)
    tip_position = fields.Nested(GeometryEntrySchema)
    piston_margin = fields.Nested(GeometryEntrySchema)
    valve_margin = fields.Nested(GeometryEntrySchema)


class TorqueSchema(Schema):
    min = fields.Float(required=True)
    max = fields.Float(required=True)
    unit = fields.String(required=True, metadata={"example": "N*m"})
    turn_angle_deg = fields.Float(allow_none=True)
    source = fields.String(required=True)


class FitResultSchema(Schema):
    verdict = fields.String(required=True, validate=validate.OneOf(VERDICTS))
    thread = fields.String(required=True, metadata={"example": "M14x1.25"})
    findings = fields.List(fields.Nested(FindingSchema), required=True)
    geometry = fields.Nested(GeometrySchema, required=True)
    analysis = fields.Dict(keys=fields.String(),
                           values=fields.Dict(keys=fields.String(), values=fields.Nested(QuantitySchema)),
                           required=True)
    torque = fields.Nested(TorqueSchema, allow_none=True, required=True)
    assumptions = fields.List(fields.String(), required=True)
    cautions = fields.List(fields.String(), required=True)
    engine_version = fields.String(required=True)
    catalog_version = fields.String(required=True)


def _round(value: float, unit: str) -> float:
    return round(value, _DIGITS.get(unit, 4))


def _geometry_entry(bounds: Bounds, system: str) -> dict[str, Any]:
    unit = output_unit("length", system)
    if system == "metric":
        digits = _DIGITS["mm"]
        return {"nominal": round(bounds.nominal, digits), "min": round(bounds.min, digits),
                "max": round(bounds.max, digits), "rss_min": round(bounds.rss_min, digits),
                "rss_max": round(bounds.rss_max, digits), "unit": unit}
    return {name: _round(from_canonical(getattr(bounds, name), "length", system), unit)
            for name in ("nominal", "min", "max", "rss_min", "rss_max")} | {"unit": unit}


def _quantity(value: float, kind: str, system: str) -> dict[str, Any]:
    unit = output_unit(kind, system)
    return {"value": _round(from_canonical(value, kind, system), unit), "unit": unit}


def render_message(template: str, values: dict[str, dict[str, Any]]) -> str:
    """Fill `{name}` placeholders with the finding's values in the output units."""
    if "{" not in template:
        return template
    text = template
    for name, quantity in values.items():
        placeholder = "{" + name + "}"
        if placeholder in text:
            shown = _MESSAGE_FORMAT.get(quantity["unit"], "{:g} " + quantity["unit"]).format(quantity["value"])
            text = text.replace(placeholder, shown)
    return text


def result_document(result: FitResult, system: str = "metric") -> dict[str, Any]:
    """The contract's result document for one check, in metric or imperial units."""
    findings = []
    for finding in result.findings:
        values = {name: _quantity(value, kind, system) for name, (value, kind) in finding.values.items()}
        findings.append({"code": finding.code, "check": finding.check, "severity": finding.severity,
                         "message": render_message(finding.message, values), "values": values})
    torque = None
    if result.torque is not None:
        unit = output_unit("torque", system)
        torque = {"min": _round(from_canonical(result.torque.min_nm, "torque", system), unit),
                  "max": _round(from_canonical(result.torque.max_nm, "torque", system), unit),
                  "unit": unit, "turn_angle_deg": result.torque.turn_angle_deg, "source": result.torque.source}
    return {
        "verdict": result.verdict,
        "thread": result.thread,
        "findings": findings,
        "geometry": {name: _geometry_entry(bounds, system) for name, bounds in result.geometry.items()},
        "analysis": {check: {name: _quantity(value, kind, system) for name, (value, kind) in quantities.items()}
                     for check, quantities in result.analysis.items()},
        "torque": torque,
        "assumptions": list(result.assumptions),
        "cautions": list(result.cautions),
        "engine_version": result.engine_version,
        "catalog_version": result.catalog_version,
    }
