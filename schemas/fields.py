"""marshmallow fields for quantities with units, threads and seats.

They are the boundary between what a client writes and the floats the engine reads:
`"0.75 in"`, `19`, `{"value": 19, "unit": "mm", "tol": 0.2}` all load as a `Dim` in mm,
and a string is parsed by pint once per process (see `service.units`).
"""
from __future__ import annotations

from typing import Any

from marshmallow import Schema, ValidationError, fields, validate

from service.fitment.model import GRADES, Dim
from service.units import MAX_QUANTITY_TEXT, UnitError, check_finite, parse_quantity, pressure_reference

# A quantity as text follows service.units.QUANTITY_GRAMMAR; `format: quantity` names
# it in the OpenAPI document (and lets schemathesis generate such text).
_QUANTITY_TEXT = {"type": "string", "format": "quantity", "maxLength": MAX_QUANTITY_TEXT, "example": "0.75 in"}
_NUMBER_OR_STRING = [{"type": "number"}, _QUANTITY_TEXT]
# Component names of the object forms (registered by `service.web.smorest.ContractPlugin`
# and by the answer schemas below): a request may send back what an answer holds.
LENGTH_COMPONENT = "Length"
LENGTH_INPUT_COMPONENT = "LengthInput"
QUANTITY_COMPONENT = "Quantity"
LENGTH_INPUT = {
    "type": "object",
    "description": "A length with its unit and, optionally, a tolerance (tol, or plus and minus).",
    "required": ["value"],
    "properties": {
        "value": {"oneOf": _NUMBER_OR_STRING},
        "unit": {"type": "string", "example": "mm"},
        "tol": {"type": "number", "minimum": 0, "description": "symmetric tolerance, in `unit`"},
        "plus": {"type": "number", "minimum": 0, "description": "upper tolerance, in `unit`"},
        "minus": {"type": "number", "minimum": 0, "description": "lower tolerance (a positive amount), in `unit`"},
    },
    "additionalProperties": False,
}


def _reference(component: str) -> dict[str, str]:
    return {"$ref": f"#/components/schemas/{component}"}


# Tolerances beyond this are not tolerances any more (a typo, or the wrong unit).
MAX_TOLERANCE_MM = 10.0


def _scalar(value: Any, kind: str) -> float:
    """A bare number (in the kind's bare unit) or a string with units, as a canonical float."""
    if isinstance(value, str):
        return parse_quantity(value, kind)
    number = check_finite(value, kind)
    return parse_quantity(repr(number), kind) if kind == "temperature" else number


class Quantity(fields.Field):
    """A scalar quantity: a number in the kind's bare unit, a string with units, or an
    object `{"value": 2.5, "unit": "bar"}` (what an answer writes: lengths as `Length`,
    which may carry a zero tolerance, the others as `Quantity`).

    Loads as a float in the engine's unit (mm, N·m, bar, K, kV, deg); dumps as a number
    in that unit (answers use `QuantityValue` / `LengthValue` instead).
    """

    def __init__(self, kind: str, *, minimum: float | None = None, maximum: float | None = None,
                 bare_unit: str = "", **kwargs: Any) -> None:
        self.kind = kind
        self.minimum = minimum
        self.maximum = maximum
        metadata = kwargs.pop("metadata", {})
        description = metadata.pop("description", "")
        # What the value is, without the input grammar: the answer schemas reuse it.
        self.meaning = description
        unit_note = f"A number ({bare_unit}), a string with units or an object with value and unit." \
            if bare_unit else ""
        answer = LENGTH_COMPONENT if kind == "length" else QUANTITY_COMPONENT
        metadata = {"anyOf": _NUMBER_OR_STRING + [_reference(answer)],
                    "description": " ".join(part for part in (description, unit_note) if part),
                    **metadata}
        super().__init__(metadata=metadata, **kwargs)

    def _deserialize(self, value: Any, attr: str | None, data: Any, **kwargs: Any) -> float:
        try:
            number = self._from_object(value) if isinstance(value, dict) else _scalar(value, self.kind)
        except UnitError as exc:
            raise ValidationError(str(exc)) from exc
        self._check_range(number)
        return number

    def _from_object(self, value: dict) -> float:
        tolerances = ("tol", "plus", "minus") if self.kind == "length" else ()
        members = ("value", "unit", *tolerances)
        unknown = set(value) - set(members)
        if unknown:
            raise ValidationError(f"unknown member(s) {', '.join(sorted(unknown))}; use {', '.join(members)}")
        if "value" not in value:
            raise ValidationError("the object form needs a value")
        if any(value.get(name) for name in tolerances):
            raise ValidationError("takes no tolerance")
        unit = value.get("unit", CANONICAL_UNITS[self.kind])
        if not isinstance(unit, str):
            raise ValidationError(f"unit must be a string such as '{CANONICAL_UNITS[self.kind]}'")
        raw = value["value"]
        if isinstance(raw, str):
            return parse_quantity(raw, self.kind)
        number = check_finite(raw, self.kind)
        if self.kind == "temperature":  # an offset scale: parse the whole quantity
            return parse_quantity(f"{number!r} {unit}", self.kind)
        return number * parse_quantity(f"1 {unit}", self.kind)

    def _check_range(self, number: float) -> None:
        if self.minimum is not None and number < self.minimum:
            raise ValidationError(f"must be at least {self.minimum:g} {CANONICAL_UNITS[self.kind]}")
        if self.maximum is not None and number > self.maximum:
            raise ValidationError(f"must be at most {self.maximum:g} {CANONICAL_UNITS[self.kind]}")

    def _serialize(self, value: Any, attr: str | None, obj: Any, **kwargs: Any) -> Any:
        # A bare temperature reads as degC but is held in K: write the unit, so a stored
        # head sent back unchanged (GET then PUT) keeps its temperature.
        if value is not None and self.kind == "temperature":
            return f"{value!r} K"
        return value


_ARTICLE = {"absolute": "an", "gauge": "a"}


class Pressure(Quantity):
    """A pressure counted from a zero the field fixes: `absolute` (from vacuum) or `gauge`
    (above the atmosphere). A bare number is in bar of that kind; a string may say which
    it is ("15 psig", "2.5 bara", "1.5 bar gauge"), and a string that says the other kind
    is refused with `other_kind_hint`, the field to use instead."""

    def __init__(self, reference: str, *, other_kind_hint: str, **kwargs: Any) -> None:
        self.reference = reference
        self.other_kind_hint = other_kind_hint
        super().__init__("pressure", bare_unit=f"bar, {reference}", **kwargs)

    def _deserialize(self, value: Any, attr: str | None, data: Any, **kwargs: Any) -> float:
        said = None
        if isinstance(value, str):
            value, said = pressure_reference(value)
        elif isinstance(value, dict) and isinstance(value.get("unit"), str):
            unit, said = pressure_reference(value["unit"])
            value = {**value, "unit": unit}
        if said is not None and said != self.reference:
            raise ValidationError(f"is {_ARTICLE[self.reference]} {self.reference} pressure, and {said!r} was given: "
                                  f"{self.other_kind_hint}")
        return super()._deserialize(value, attr, data, **kwargs)

    def _check_range(self, number: float) -> None:
        if self.minimum is not None and number < self.minimum:
            raise ValidationError(f"must be at least {self.minimum:g} bar {self.reference}")
        if self.maximum is not None and number > self.maximum:
            raise ValidationError(f"must be at most {self.maximum:g} bar {self.reference}")


CANONICAL_UNITS = {"length": "mm", "torque": "N*m", "pressure": "bar", "temperature": "K",
              "voltage": "kV", "angle": "deg", "speed": "rpm", "mass": "g", "area": "mm**2"}


class Length(Quantity):
    """A length with an optional tolerance; loads as a `Dim` in mm.

    Accepts a number (mm), a string with units, or an object
    `{"value": 19, "unit": "mm", "tol": 0.2}` / `{"value": ..., "plus": ..., "minus": ...}`.
    A length without a tolerance is exact. Dumps as a number when exact, else as the
    object form in mm, so what the API returns can be sent back unchanged.
    """

    def __init__(self, *, minimum: float | None = 0.0, maximum: float | None = None, **kwargs: Any) -> None:
        metadata = kwargs.pop("metadata", {})
        meaning = metadata.get("description", "")
        metadata.setdefault("anyOf", _NUMBER_OR_STRING + [_reference(LENGTH_COMPONENT),
                                                          _reference(LENGTH_INPUT_COMPONENT)])
        metadata["description"] = " ".join(part for part in (
            meaning,
            ("A number (mm), a string with units such as \"0.75 in\", or an object with "
            "value, unit and tol (or plus and minus): a Length from an answer can be sent back.")) if part)
        super().__init__("length", minimum=minimum, maximum=maximum, metadata=metadata, **kwargs)
        self.meaning = meaning

    def _deserialize(self, value: Any, attr: str | None, data: Any, **kwargs: Any) -> Dim:
        if isinstance(value, dict):
            return self._toleranced(value)
        return Dim(super()._deserialize(value, attr, data, **kwargs))

    def _toleranced(self, value: dict) -> Dim:
        unknown = set(value) - {"value", "unit", "tol", "plus", "minus"}
        if unknown:
            raise ValidationError(f"unknown member(s) {', '.join(sorted(unknown))}; "
                                  "use value, unit, tol, plus, minus")
        if "value" not in value:
            raise ValidationError("the object form needs a value")
        unit = value.get("unit", "mm")
        if not isinstance(unit, str):
            raise ValidationError("unit must be a string such as 'mm' or 'in'")
        try:
            scale = parse_quantity(f"1 {unit}", "length")
            raw = value["value"]
            nominal = parse_quantity(raw, "length") if isinstance(raw, str) else check_finite(raw, "length") * scale
            if "tol" not in value and "plus" not in value and "minus" not in value:
                # No tolerance (what a CSV column with a unit in its header gives): an
                # exact length. Spares two tolerance checks per value on long lists.
                self._check_range(nominal)
                return Dim(nominal, 0.0, 0.0)
            if "tol" in value and ("plus" in value or "minus" in value):
                raise ValidationError("give tol, or plus and minus, not both")
            if "tol" in value:
                plus = minus = self._tolerance(value["tol"], scale)
            else:
                plus = self._tolerance(value.get("plus", 0.0), scale)
                minus = self._tolerance(value.get("minus", 0.0), scale)
        except UnitError as exc:
            raise ValidationError(str(exc)) from exc
        self._check_range(nominal)
        return Dim(nominal, plus, minus)

    @staticmethod
    def _tolerance(raw: Any, scale: float) -> float:
        tolerance = check_finite(raw, "length") * scale
        if tolerance < 0:
            raise ValidationError("tolerances are positive amounts (give minus as a positive number)")
        if tolerance > MAX_TOLERANCE_MM:
            raise ValidationError(f"a tolerance above {MAX_TOLERANCE_MM:g} mm is not plausible")
        return tolerance

    def _serialize(self, value: Any, attr: str | None, obj: Any, **kwargs: Any) -> Any:
        if value is None:
            return None
        if value.plus == 0.0 and value.minus == 0.0:
            return value.nominal
        if value.plus == value.minus:
            return {"value": value.nominal, "unit": "mm", "tol": value.plus}
        return {"value": value.nominal, "unit": "mm", "plus": value.plus, "minus": value.minus}


class Choice(fields.String):
    """A string from a fixed set, with input aliases mapped onto the canonical names.

    The document publishes one value per choice (the enum lists the canonical names
    only, so a generated client has one identifier each); the aliases are accepted on
    input, in any case, and listed in the description for people.
    """

    def __init__(self, choices: tuple[str, ...], aliases: dict[str, str] | None = None, **kwargs: Any) -> None:
        self.choices = choices
        self.aliases = aliases or {}
        metadata = kwargs.pop("metadata", {})
        metadata.setdefault("enum", list(choices))
        self.meaning = metadata.get("description", "")
        if self.aliases:
            accepted = "; ".join(f"{alias} for {name}" for alias, name in sorted(self.aliases.items()))
            metadata["description"] = " ".join(part for part in (
                metadata.get("description", ""), f"Also accepted on input: {accepted}.") if part)
        super().__init__(metadata=metadata, **kwargs)

    def _deserialize(self, value: Any, attr: str | None, data: Any, **kwargs: Any) -> str:
        text = super()._deserialize(value, attr, data, **kwargs).strip().lower()
        text = self.aliases.get(text, text)
        if text not in self.choices:
            raise ValidationError(f"must be one of: {', '.join(self.choices)}")
        return text


SEAT_ALIASES = {"gasket": "flat", "taper": "conical", "tapered": "conical"}



class WholeNumber(fields.Integer):
    """A count: an integer, or a number or string that is one ("5", 5.0). marshmallow's
    lenient Integer truncates 2.5 to 2 without a word; a count of 2.5 is an error."""

    def _validated(self, value: Any) -> int:
        if isinstance(value, float) and not value.is_integer():
            raise self.make_error("invalid")
        return super()._validated(value)


# --- how answers write quantities --------------------------------------------------------------
# One shape everywhere: a length is {"value", "unit", "plus", "minus"} in mm, rounded to
# 0.001 mm (the engine and the database keep full precision); any other quantity is
# {"value", "unit"} in its canonical unit. Both can be sent back as input.

ANSWER_DIGITS = {"length": 3, "torque": 3, "pressure": 5, "temperature": 3, "voltage": 3, "angle": 3,
                 "speed": 3, "mass": 3, "area": 3}


def rounded(value: float, digits: int) -> float:
    """`value` to `digits` decimals, without float noise or a negative zero."""
    return round(value, digits) + 0.0


class QuantitySchema(Schema):
    """A quantity in an answer: a number and its unit (ASCII, pint-parsable); where the
    result says how sure it is, its grade and source."""

    value = fields.Float(required=True)
    unit = fields.String(required=True, metadata={"example": "mm"})
    grade = fields.String(validate=validate.OneOf(GRADES), metadata={
        "description": "how sure the value is, where the result says: published, derived, from memory or "
                       "common practice (as the shared reference values grade them)"})
    source = fields.String(metadata={"description": "where the value comes from, where the result says"})


class LengthSchema(Schema):
    """A length in an answer: millimetres, rounded to 0.001 mm, with its tolerance
    (plus and minus, positive amounts; both 0 when the length is exact)."""

    value = fields.Float(required=True, metadata={"example": 19.0})
    unit = fields.String(required=True, metadata={"example": "mm", "enum": ["mm"]})
    plus = fields.Float(required=True, metadata={"example": 0.1})
    minus = fields.Float(required=True, metadata={"example": 0.1})


class LengthValue(fields.Nested):
    """Writes a `Dim` (or a float in mm) as a `Length` object."""

    def __init__(self, **kwargs: Any) -> None:
        super().__init__(LengthSchema, **kwargs)

    def _serialize(self, value: Any, attr: str | None, obj: Any, **kwargs: Any) -> Any:
        if value is None:
            return None
        dim = value if isinstance(value, Dim) else Dim(float(value))
        digits = ANSWER_DIGITS["length"]
        return {"value": rounded(dim.nominal, digits), "unit": "mm", "plus": rounded(dim.plus, digits),
                "minus": rounded(dim.minus, digits)}


class QuantityValue(fields.Nested):
    """Writes a float in the kind's canonical unit as a `Quantity` object."""

    def __init__(self, kind: str, **kwargs: Any) -> None:
        self.kind = kind
        super().__init__(QuantitySchema, **kwargs)

    def _serialize(self, value: Any, attr: str | None, obj: Any, **kwargs: Any) -> Any:
        if value is None:
            return None
        return {"value": rounded(float(value), ANSWER_DIGITS[self.kind]), "unit": CANONICAL_UNITS[self.kind]}
