"""marshmallow fields for quantities with units, threads and seats.

They are the boundary between what a client writes and the floats the engine reads:
`"0.75 in"`, `19`, `{"value": 19, "unit": "mm", "tol": 0.2}` all load as a `Dim` in mm,
and a string is parsed by pint once per process (see `service.units`).
"""
from __future__ import annotations

from typing import Any

from marshmallow import ValidationError, fields

from service.fitment.model import Dim
from service.units import UnitError, check_finite, parse_quantity

_NUMBER_OR_STRING = [{"type": "number"}, {"type": "string"}]
_TOLERANCED_OBJECT = {
    "type": "object",
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
# Tolerances beyond this are not tolerances any more (a typo, or the wrong unit).
MAX_TOLERANCE_MM = 10.0


def _scalar(value: Any, kind: str) -> float:
    """A bare number (in the kind's bare unit) or a string with units, as a canonical float."""
    if isinstance(value, str):
        return parse_quantity(value, kind)
    number = check_finite(value, kind)
    return parse_quantity(repr(number), kind) if kind == "temperature" else number


class Quantity(fields.Field):
    """A scalar quantity: a number in the kind's bare unit or a string with units.

    Loads as a float in the engine's unit (mm, N·m, bar, K, kV, deg); dumps as a number
    in that unit.
    """

    def __init__(self, kind: str, *, minimum: float | None = None, maximum: float | None = None,
                 bare_unit: str = "", **kwargs: Any) -> None:
        self.kind = kind
        self.minimum = minimum
        self.maximum = maximum
        metadata = kwargs.pop("metadata", {})
        description = metadata.pop("description", "")
        unit_note = f"A number ({bare_unit}) or a string with units." if bare_unit else ""
        metadata = {"oneOf": _NUMBER_OR_STRING,
                    "description": " ".join(part for part in (description, unit_note) if part),
                    **metadata}
        super().__init__(metadata=metadata, **kwargs)

    def _deserialize(self, value: Any, attr: str | None, data: Any, **kwargs: Any) -> float:
        try:
            number = _scalar(value, self.kind)
        except UnitError as exc:
            raise ValidationError(str(exc)) from exc
        self._check_range(number)
        return number

    def _check_range(self, number: float) -> None:
        if self.minimum is not None and number < self.minimum:
            raise ValidationError(f"must be at least {self.minimum:g} {_CANONICAL[self.kind]}")
        if self.maximum is not None and number > self.maximum:
            raise ValidationError(f"must be at most {self.maximum:g} {_CANONICAL[self.kind]}")

    def _serialize(self, value: Any, attr: str | None, obj: Any, **kwargs: Any) -> Any:
        # A bare temperature reads as degC but is held in K: write the unit, so a stored
        # head sent back unchanged (GET then PUT) keeps its temperature.
        if value is not None and self.kind == "temperature":
            return f"{value!r} K"
        return value


_CANONICAL = {"length": "mm", "torque": "N*m", "pressure": "bar", "temperature": "K",
              "voltage": "kV", "angle": "deg"}


class Length(Quantity):
    """A length with an optional tolerance; loads as a `Dim` in mm.

    Accepts a number (mm), a string with units, or an object
    `{"value": 19, "unit": "mm", "tol": 0.2}` / `{"value": ..., "plus": ..., "minus": ...}`.
    A length without a tolerance is exact. Dumps as a number when exact, else as the
    object form in mm, so what the API returns can be sent back unchanged.
    """

    def __init__(self, *, minimum: float | None = 0.0, maximum: float | None = None, **kwargs: Any) -> None:
        metadata = kwargs.pop("metadata", {})
        metadata.setdefault("oneOf", _NUMBER_OR_STRING + [_TOLERANCED_OBJECT])
        metadata["description"] = " ".join(part for part in (
            metadata.get("description", ""),
            ("A number (mm), a string with units such as \"0.75 in\", or an object with "
            "value, unit and tol (or plus and minus).")) if part)
        super().__init__("length", minimum=minimum, maximum=maximum, metadata=metadata, **kwargs)

    def _deserialize(self, value: Any, attr: str | None, data: Any, **kwargs: Any) -> Dim:
        if isinstance(value, dict):
            return self._from_object(value)
        return Dim(super()._deserialize(value, attr, data, **kwargs))

    def _from_object(self, value: dict) -> Dim:
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
    """A string from a fixed set, with input aliases mapped onto the canonical names."""

    def __init__(self, choices: tuple[str, ...], aliases: dict[str, str] | None = None, **kwargs: Any) -> None:
        self.choices = choices
        self.aliases = aliases or {}
        metadata = kwargs.pop("metadata", {})
        metadata.setdefault("enum", list(choices) + sorted(self.aliases))
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
