"""The answer schemas are derived from the request schemas field by field
(schemas/answers.py): one shape per kind of value, whatever spelling the request took."""
from __future__ import annotations

from marshmallow import fields

from schemas.answers import PlugSchema, answer_schema
from schemas.fields import Choice, Length, LengthValue, Quantity, QuantityValue
from schemas.specs import StoredPlugSchema


class _Extended(StoredPlugSchema):
    """A request schema with fields of every kind a later change may add."""

    shoulder = Length(metadata={"description": "a new length"})
    boost = Quantity("pressure", bare_unit="bar")
    finish = Choice(("plain", "plated"), {"nickel": "plated"})
    marks = fields.List(Length())


def test_a_field_added_to_a_request_schema_is_answered_typed():
    answer = answer_schema("ExtendedAnswerSchema", _Extended)().fields
    assert isinstance(answer["shoulder"], LengthValue)
    assert answer["shoulder"].metadata == {"description": "a new length"}  # without the input grammar
    assert isinstance(answer["boost"], QuantityValue) and answer["boost"].kind == "pressure"
    assert answer["finish"].metadata["enum"] == ["plain", "plated"]  # the alias is not published
    assert isinstance(answer["marks"].inner, LengthValue)


def test_a_plug_is_answered_in_one_shape_rounded_to_a_micrometre():
    """0.75 in = 19.05 mm exactly (NIST SP 811); 0.75 * 25.4 in floats is 19.049999999999997."""
    stored = StoredPlugSchema().load({"sku": "U-1", "thread": "M14", "seat": "gasket", "reach": "0.75 in", "hex": 16})
    assert stored["reach"].nominal != 19.05  # the engine keeps what pint computed
    written = PlugSchema().dump(stored)
    assert written["reach"] == {"value": 19.05, "unit": "mm", "plus": 0.0, "minus": 0.0}
    assert written["hex"] == {"value": 16.0, "unit": "mm", "plus": 0.0, "minus": 0.0}
    assert written["seat"] == "flat"
    assert StoredPlugSchema().load(written)["reach"].nominal == 19.05  # sent back unchanged
