"""The typed answers for stored records: what GET (and every answer that carries a plug
or a head) writes, as separate schemas from the requests.

A request field accepts several spellings (a number, a string with units, an object);
an answer writes one: every length as a `Length` object (mm, rounded to 0.001 mm, with
plus and minus), every other quantity as a `Quantity` object, every choice as its one
canonical value. The answer schemas are derived field by field from the request schemas
(`answer_schema`), so a field added to a request schema in `schemas.specs` appears in the
answers, typed, without a second declaration. What an answer writes can be sent back
unchanged as a request.
"""
from __future__ import annotations

from typing import Any

from marshmallow import Schema, fields

from .fields import Choice, Length, LengthValue, Quantity, QuantityValue
from .specs import StoredHeadSchema, StoredPlugSchema


def _meaning(field: fields.Field) -> str:
    """What the field is, without the input grammar the request's description adds."""
    return field.meaning if hasattr(field, "meaning") else field.metadata.get("description", "")


def answer_field(field: fields.Field, *, name: str) -> fields.Field:
    """The answer's version of one request field."""
    required = field.required or field.load_default is not fields.missing_
    metadata = {key: value for key, value in {"description": _meaning(field)}.items() if value}
    if isinstance(field, Length) or (isinstance(field, Quantity) and field.kind == "length"):
        return LengthValue(required=required, metadata=metadata)
    if isinstance(field, Quantity):
        return QuantityValue(field.kind, required=required, metadata=metadata)
    if isinstance(field, Choice):
        return fields.String(required=required, metadata={**metadata, "enum": list(field.choices)})
    if isinstance(field, fields.Nested):
        inner = field.schema.__class__
        typed = answer_schema(f"{inner.__name__.removesuffix('Schema')}AnswerSchema", inner) \
            if _has_units(inner) else inner
        return fields.Nested(typed, required=required, allow_none=field.allow_none, metadata=metadata)
    if isinstance(field, fields.List):
        return fields.List(answer_field(field.inner, name=f"{name}[]"), required=required, metadata=metadata)
    if isinstance(field, fields.Integer):
        return fields.Integer(required=required, metadata=metadata)
    if isinstance(field, fields.Float):
        return fields.Float(required=required, metadata=metadata)
    if isinstance(field, fields.Boolean):
        return fields.Boolean(required=required, metadata=metadata)
    if isinstance(field, fields.String):
        example = field.metadata.get("example")
        return fields.String(required=required, metadata={**metadata, **({"example": example} if example else {})})
    raise TypeError(f"{name}: no answer form for a {type(field).__name__} field; add one to schemas.answers")


def _has_units(schema: type[Schema]) -> bool:
    return any(isinstance(field, (Quantity, Choice, fields.Nested))
               for field in schema().declared_fields.values())


def answer_schema(class_name: str, request_schema: type[Schema], doc: str | None = None) -> type[Schema]:
    """A Schema class named `class_name` (its OpenAPI component is the name without
    `Schema`) with the answer version of every field of `request_schema`."""
    declared: dict[str, Any] = {name: answer_field(field, name=name)
                                for name, field in request_schema().declared_fields.items()
                                if not field.load_only}
    schema = type(class_name, (Schema,), declared)
    schema.__doc__ = doc or request_schema.__doc__
    return schema


PlugSchema = answer_schema("PlugSchema", StoredPlugSchema, (
    "An inventory plug as the API answers it: lengths as Length objects in mm (rounded to 0.001 mm), "
    "one value per choice; fields the record does not have are left out. It can be sent back unchanged."))
HeadSchema = answer_schema("HeadSchema", StoredHeadSchema, (
    "A stored head port as the API answers it: lengths as Length objects in mm (rounded to 0.001 mm), "
    "other quantities as Quantity objects in their canonical unit (pressures absolute, in bar; "
    "temperatures in K); fields the record does not have are left out. It can be sent back unchanged."))
