"""Schemas for plugs, head ports, check options and fit-check requests.

The single source of what a valid plug or port is: the REST layer, the batch endpoint
and the command-line tool all load through these, and the OpenAPI document is generated
from them. Loading yields dicts of canonical values (lengths as `Dim` in mm);
`plug_spec` and `port_spec` turn them into the engine's records.
"""
from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any, ClassVar

from marshmallow import RAISE, Schema, ValidationError, fields, validate, validates_schema
from marshmallow.error_store import merge_errors

from service.fitment.catalog import MATERIALS, SEATS
from service.fitment.checks import CHECK_NAMES
from service.fitment.defaults import GASKET_CONDITIONS, LUBRICATIONS, STACKS
from service.fitment.designation import format_designation, parse_designation
from service.fitment.model import (
    INSERT_KINDS,
    INSERT_MATERIALS,
    HeatRange,
    HeatRangeBand,
    Insert,
    Options,
    PlugSpec,
    PortSpec,
    Span,
)
from service.fitment.running import ROD_MATERIALS

from .fields import SEAT_ALIASES, Choice, Length, Pressure, Quantity, WholeNumber

# The contract's identifier rule for sku and head_id.
IDENTIFIER = validate.Regexp(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$",
                             error="1-64 letters, digits, '-', '_' or '.', starting with a letter or digit")

# Plausibility limits, in mm. Standard spark-plug reaches run to about 26.5 mm
# (reference-values.md, common practice); anything past 60 mm is a typo or a wrong unit.
MAX_REACH_MM = 60.0
MAX_GASKET_MM = 5.0
MAX_FIRING_END_MM = 20.0
MAX_PORT_MM = 120.0
MAX_CLEARANCE_MM = 250.0
HEX_RANGE_MM = (8.0, 40.0)
# A plug leaning further than this from the cylinder axis is a side plug, whose piston
# clearance needs another model than a flat crown square to the cylinder axis.
MAX_INCLINATION_DEG = 75.0
# Above any piston engine a plug fits; past it a speed is a typo (rpm written for something else).
MAX_RPM = 25_000.0
# Seat diameters (gasket, spot face, counterbore, taper) in mm, and included taper angles
# in degrees: a plug seat is some 10-40 mm across; tapers are quoted near 60 deg.
SEAT_DIAMETER_RANGE_MM = (5.0, 80.0)
SEAT_ANGLE_RANGE_DEG = (20.0, 150.0)
MAX_INSERT_MM = 60.0


def _catalog():
    from service.catalog_loader import load_catalog

    return load_catalog()


# "M14 x 1.25" is 10 characters; a designation is never near this.
MAX_DESIGNATION_TEXT = 32


class Thread(fields.String):
    """An ISO 261 designation; a bare `M14` means the spark-plug pitch for that size.

    Loads as the full designation (`M14x1.25`). Whether a non-standard pitch is allowed
    is decided by the owning schema (it needs `nonstandard_thread`).
    """

    def __init__(self, **kwargs: Any) -> None:
        metadata = {"example": "M14x1.25", "maxLength": MAX_DESIGNATION_TEXT,
                    "description": "ISO 261 designation, e.g. M14x1.25; "
                    "a bare M14 means the spark-plug pitch for that size", **kwargs.pop("metadata", {})}
        super().__init__(metadata=metadata, **kwargs)

    def _deserialize(self, value: Any, attr: str | None, data: Any, **kwargs: Any) -> str:
        text = super()._deserialize(value, attr, data, **kwargs)
        if len(text) > MAX_DESIGNATION_TEXT:
            # Checked before the designation pattern, whose space runs backtrack: a thread
            # of 20,000 spaces cost 1.4 s, growing with the square of the length.
            raise ValidationError(f"a thread designation has at most {MAX_DESIGNATION_TEXT} characters, "
                                  "such as M14x1.25")
        numbers = parse_designation(text)
        if numbers is None:
            raise ValidationError("not a thread designation such as M14x1.25")
        diameter, pitch = numbers
        if pitch is None:
            size = _catalog().thread_for_diameter(diameter)
            if size is None:
                raise ValidationError(f"no standard spark-plug thread of {diameter:g} mm; give the pitch, e.g. M{diameter:g}x1.25")
            return size.designation
        if not (4.0 <= diameter <= 30.0 and 0.3 <= pitch <= 3.0):
            raise ValidationError("not a plausible spark-plug thread")
        return format_designation(diameter, pitch)


def _check_thread_is_standard(data: dict, errors: dict) -> None:
    thread = data.get("thread")
    if thread is None or data.get("nonstandard_thread") or _catalog().thread(thread) is not None:
        return
    diameter, _pitch = parse_designation(thread)
    size = _catalog().thread_for_diameter(diameter)
    hint = f" (M{diameter:g} spark-plug threads are {size.designation})" if size else ""
    errors.setdefault("thread", []).append(
        f"{thread} is not a standard spark-plug thread{hint}; set nonstandard_thread to true to use it anyway")


Rule = Callable[[dict], None]


def apply_rules(rules: Sequence[Rule], data: dict) -> None:
    """Run each rule across fields on a loaded dict; their messages, merged, as one
    ValidationError (as marshmallow merges those of several schema validators)."""
    errors: dict[str, Any] = {}
    for rule in rules:
        try:
            rule(data)
        except ValidationError as exc:
            errors = merge_errors(errors, exc.normalized_messages())
    if errors:
        raise ValidationError(errors)


class RuledSchema(Schema):
    """A schema whose checks across fields are plain functions listed in `rules` (each
    takes the loaded dict and raises ValidationError), with no other hooks.

    marshmallow runs the rules after the fields load, as one schema validator; a
    loader that deserializes the fields itself (`schemas.field_loader`) runs the same
    list, so the rules are written once.
    """

    rules: ClassVar[tuple[Rule, ...]] = ()

    @validates_schema
    def _apply_rules(self, data: dict, **kwargs: Any) -> None:
        apply_rules(self.rules, data)


class HeatRangeSchema(Schema):
    scale = fields.String(required=True, validate=validate.Length(1, 40),
                          metadata={"description": "name of the heat-range scale the value is on", "example": "shop-scale"})
    value = fields.Float(required=True, allow_nan=False)


class HeatRangeBandSchema(Schema):
    scale = fields.String(required=True, validate=validate.Length(1, 40), metadata={"example": "shop-scale"})
    min = fields.Float(required=True, allow_nan=False)
    max = fields.Float(required=True, allow_nan=False)

    @validates_schema
    def _ordered(self, data: dict, **kwargs: Any) -> None:
        if data["min"] > data["max"]:
            raise ValidationError("min must not exceed max", "min")


class BootRangeSchema(Schema):
    min = Length(required=True, maximum=MAX_CLEARANCE_MM)
    max = Length(required=True, maximum=MAX_CLEARANCE_MM)

    @validates_schema
    def _ordered(self, data: dict, **kwargs: Any) -> None:
        if data["min"].nominal > data["max"].nominal:
            raise ValidationError("min must not exceed max", "min")


def plug_can_exist(data: dict) -> None:
    """A plug of a standard thread (unless declared otherwise); a gasket on a flat seat only,
    a taper's angle and diameter on a conical one, seat diameters outside the thread."""
    errors: dict[str, list[str]] = {}
    _check_thread_is_standard(data, errors)
    if data.get("seat") == "conical" and data.get("gasket_thickness") is not None:
        errors.setdefault("gasket_thickness", []).append("a conical-seat plug has no gasket")
    if data.get("seat") == "conical" and data.get("gasket_outside_diameter") is not None:
        errors.setdefault("gasket_outside_diameter", []).append("a conical-seat plug has no gasket")
    if data.get("seat") == "flat":
        for name in ("seat_angle", "seat_diameter"):
            if data.get(name) is not None:
                errors.setdefault(name, []).append("for a conical seat only: a flat seat seals on its gasket")
    _check_wider_than_thread(data, errors, ("gasket_outside_diameter", "seat_diameter"))
    if errors:
        raise ValidationError(errors)


class PlugDimensionsSchema(RuledSchema):
    """The dimensions of a plug design."""

    rules = (plug_can_exist,)

    class Meta:
        unknown = RAISE

    thread = Thread()
    nonstandard_thread = fields.Boolean(load_default=False, metadata={
        "description": "accept a thread the catalogue does not list as a spark-plug thread"})
    seat = Choice(SEATS, SEAT_ALIASES, metadata={"description": "flat (gasket) or conical (taper)"})
    reach = Length(maximum=MAX_REACH_MM, metadata={"description": "seat to end of shell thread", "example": 19.0})
    gasket_thickness = Length(maximum=MAX_GASKET_MM, metadata={
        "description": "installed (crushed) gasket, flat seat only; default: the catalogue's standard", "example": 1.5})
    firing_end = Length(minimum=-MAX_FIRING_END_MM, maximum=MAX_FIRING_END_MM, metadata={
        "description": "shell end to furthest electrode point; zero or negative when recessed", "example": 4.0})
    hex = Quantity("length", minimum=HEX_RANGE_MM[0], maximum=HEX_RANGE_MM[1], bare_unit="mm",
                   metadata={"description": "across flats", "example": 16.0})
    resistor = fields.Boolean(allow_none=True)
    terminal_height = Length(maximum=MAX_CLEARANCE_MM, metadata={"description": "seat to top of terminal"})
    heat_range = fields.Nested(HeatRangeSchema, allow_none=True)
    gap = Quantity("length", minimum=0.0, maximum=5.0, bare_unit="mm", metadata={"example": 0.8})
    gasket_outside_diameter = Quantity(
        "length", minimum=SEAT_DIAMETER_RANGE_MM[0], maximum=SEAT_DIAMETER_RANGE_MM[1], bare_unit="mm",
        allow_none=True, metadata={"description": "flat seat: the gasket's outside diameter; it must bear on the "
                                                  "head's spot_face_diameter", "example": 19.0})
    seat_angle = Quantity("angle", minimum=SEAT_ANGLE_RANGE_DEG[0], maximum=SEAT_ANGLE_RANGE_DEG[1], bare_unit="deg",
                          allow_none=True, metadata={"description": "conical seat: the taper's included angle; "
                                                     "compared with the head's seat_angle (63 deg when not given)",
                                                     "example": 63.0})
    seat_diameter = Quantity("length", minimum=SEAT_DIAMETER_RANGE_MM[0], maximum=SEAT_DIAMETER_RANGE_MM[1],
                             bare_unit="mm", allow_none=True, metadata={
                                 "description": "conical seat: the taper's largest diameter, where it meets the "
                                                "shell; it must cover the head's taper mouth (spot_face_diameter)"})


class StoredPlugSchema(PlugDimensionsSchema):
    """An inventory line: a plug design with the shop's own identifier and stock."""

    sku = fields.String(required=True, validate=IDENTIFIER, metadata={"example": "DEMO-P-0001"})
    description = fields.String(load_default="", validate=validate.Length(max=500))
    quantity_on_hand = WholeNumber(load_default=0, validate=validate.Range(0, 10_000_000))
    location = fields.String(allow_none=True, validate=validate.Length(max=100))
    thread = Thread(required=True)
    seat = Choice(SEATS, SEAT_ALIASES, required=True)


def plug_reference_or_inline(data: dict) -> None:
    """An inventory plug by its sku alone, or a plug's thread and seat inline."""
    _reference_or_inline(data, "sku", ("thread", "seat"))


def head_reference_or_inline(data: dict) -> None:
    """A stored head by its head_id alone, or a port's thread and seat inline."""
    _reference_or_inline(data, "head_id", ("thread", "seat"))


def _check_wider_than_thread(data: dict, errors: dict, names: tuple[str, ...]) -> None:
    """A seat diameter lies outside the thread it surrounds."""
    numbers = parse_designation(data["thread"]) if data.get("thread") else None
    if numbers is None:
        return
    for name in names:
        value = data.get(name)
        if value is not None and value <= numbers[0]:
            errors.setdefault(name, []).append(f"must be larger than the thread's {numbers[0]:g} mm diameter")


class InsertSchema(Schema):
    """A thread-repair insert in the port."""

    class Meta:
        unknown = RAISE

    kind = Choice(INSERT_KINDS, {"helical": "coil", "helical_coil": "coil", "wire": "coil", "bushing": "solid",
                                 "sleeve": "solid"}, required=True, metadata={
        "description": "coil (a helical-coil wire insert) or solid (a bushing insert)"})
    length = Length(maximum=MAX_INSERT_MM, metadata={
        "description": "from the head's seat face to the insert's chamber end", "example": 12.7})
    outer_thread = Thread(metadata={"description": "solid insert: its outer thread, e.g. M16x1.5 (a coil insert's "
                                                   "follows its tap)"})
    material = Choice(INSERT_MATERIALS, {"stainless": "stainless_steel", "steel": "carbon_steel"}, allow_none=True,
                      metadata={"description": "default: stainless_steel for a coil, carbon_steel for a solid insert"})


def _reference_or_inline(data: dict, key: str, required: tuple[str, ...]) -> None:
    if key in data:
        extra = sorted(name for name, value in data.items()
                       if value is not None and name not in (key, "nonstandard_thread"))
        if extra:
            raise ValidationError({name: [f"give {key} alone or the dimensions inline, not both"] for name in extra})
        return
    missing = [name for name in required if data.get(name) is None]
    if missing:
        raise ValidationError({name: [f"required (or give {key})"] for name in missing})


class PlugInputSchema(PlugDimensionsSchema):
    """A plug in a check: `{"sku": ...}` for an inventory line, or the dimensions inline."""

    rules = (*PlugDimensionsSchema.rules, plug_reference_or_inline)

    sku = fields.String(validate=IDENTIFIER, metadata={"description": "an inventory plug; give it alone"})


def port_can_exist(data: dict) -> None:
    """A port of a standard thread (unless declared otherwise), each dimension given one
    way, pressures that agree with each other, a long side no shorter than the short one;
    a taper's angle on a conical seat only, seat diameters outside the thread, a solid
    insert's outer thread larger than the port's and no outer thread for a coil."""
    errors: dict[str, Any] = {}
    _check_thread_is_standard(data, errors)
    for first, second in (("port_depth", "design_reach"), ("piston_clearance", "seat_to_piston"),
                          ("valve_clearance", "seat_to_valve")):
        if data.get(first) is not None and data.get(second) is not None:
            errors.setdefault(second, []).append(f"give {first} or {second}, not both")
    if data.get("intake_pressure") is not None and data.get("boost_pressure") is not None:
        errors.setdefault("boost_pressure", []).append(
            "give intake_pressure (absolute) or boost_pressure (gauge), not both")
    if data.get("forced_induction") is False and (data.get("boost_pressure") or 0.0) > 0.0:
        errors.setdefault("boost_pressure", []).append(
            "a head with forced_induction false has no boost (gauge pressure above the atmosphere)")
    depth, long_side = data.get("port_depth"), data.get("port_depth_long_side")
    if depth is not None and long_side is not None and long_side.nominal < depth.nominal:
        errors.setdefault("port_depth_long_side", []).append("the long side cannot be shorter than port_depth")
    if data.get("seat") == "flat" and data.get("seat_angle") is not None:
        errors.setdefault("seat_angle", []).append("for a conical seat only: a flat seat has no taper")
    _check_wider_than_thread(data, errors, ("spot_face_diameter", "counterbore_diameter"))
    insert = data.get("insert")
    if insert is not None:
        outer = insert.get("outer_thread")
        if outer is not None and insert.get("kind") == "coil":
            errors.setdefault("insert", {}).setdefault("outer_thread", []).append(
                "a coil insert's outer thread follows its tap: give it for a solid insert only")
        numbers = parse_designation(data["thread"]) if data.get("thread") else None
        if outer is not None and numbers is not None and parse_designation(outer)[0] <= numbers[0]:
            errors.setdefault("insert", {}).setdefault("outer_thread", []).append(
                f"must be larger than the port's thread, {data['thread']}")
    if errors:
        raise ValidationError(errors)


class PortDimensionsSchema(RuledSchema):
    """A cylinder-head plug port and, optionally, the engine conditions at the plug."""

    rules = (port_can_exist,)

    class Meta:
        unknown = RAISE

    thread = Thread()
    nonstandard_thread = fields.Boolean(load_default=False)
    seat = Choice(SEATS, SEAT_ALIASES)
    port_depth = Length(maximum=MAX_PORT_MM, metadata={
        "description": "seat face to where the bore first breaks into the chamber (short side)", "example": 17.5})
    design_reach = Length(maximum=MAX_REACH_MM, metadata={"description": "the plug reach the port was made for"})
    port_depth_long_side = Length(maximum=MAX_PORT_MM, metadata={"description": "to full break-out (long side)"})
    piston_clearance = Length(maximum=MAX_CLEARANCE_MM, metadata={
        "description": "break-out to piston crown at TDC, along the plug axis", "example": 8.0})
    seat_to_piston = Length(maximum=MAX_CLEARANCE_MM)
    valve_clearance = Length(maximum=MAX_CLEARANCE_MM)
    seat_to_valve = Length(maximum=MAX_CLEARANCE_MM)
    plug_inclination = Quantity("angle", minimum=0.0, maximum=MAX_INCLINATION_DEG, bare_unit="deg", allow_none=True,
                                metadata={"description": "angle between the plug axis and the cylinder axis; the low "
                                          "edge of the shell's thread end then comes r·tan(angle) nearer a flat crown "
                                          "than the plug axis does (r: half the thread's diameter). Default 0",
                                          "example": 15.0})
    well_bore = Quantity("length", minimum=5.0, maximum=200.0, bare_unit="mm",
                         metadata={"description": "smallest bore of the plug well the socket must pass"})
    hex = Quantity("length", minimum=HEX_RANGE_MM[0], maximum=HEX_RANGE_MM[1], bare_unit="mm",
                   metadata={"description": "the hex the head's tooling is made for"})
    resistor_required = fields.Boolean(allow_none=True)
    material = Choice(MATERIALS, {"aluminum": "aluminium", "cast iron": "cast_iron", "iron": "cast_iron"},
                      allow_none=True)
    heat_range_band = fields.Nested(HeatRangeBandSchema, allow_none=True)
    boot_range = fields.Nested(BootRangeSchema, allow_none=True)
    compression_ratio = fields.Float(allow_none=True, allow_nan=False, validate=validate.Range(1.0, 40.0))
    intake_pressure = Pressure("absolute", minimum=0.05, maximum=10.0, allow_none=True, other_kind_hint=(
        "give a gauge reading (boost above the atmosphere) as boost_pressure"), metadata={"description": (
            "absolute pressure in the intake at full load, boost included (a gauge reading plus the "
            "atmosphere): 2.5 bar absolute is 1.5 bar of boost. Give this or boost_pressure, not both."),
            "example": 1.0})
    boost_pressure = Pressure("gauge", minimum=0.0, maximum=9.0, allow_none=True, other_kind_hint=(
        "give an absolute reading as intake_pressure"), metadata={"description": (
            "gauge pressure in the intake at full load: the boost above the atmosphere, as a boost gauge "
            "reads it (\"15 psi\" here is 15 psi of boost). The standard atmosphere, 1.01325 bar absolute, "
            "is added. Give this or intake_pressure, not both."), "example": 1.0})
    forced_induction = fields.Boolean(allow_none=True, metadata={"description": (
        "true for a turbocharged or supercharged engine. Without intake_pressure (absolute) or "
        "boost_pressure (gauge) its gap voltage is then not checked, rather than estimated at the atmosphere.")})
    intake_temperature = Quantity("temperature", minimum=200.0, maximum=600.0, bare_unit="degC", allow_none=True)
    peak_pressure = Pressure("absolute", minimum=1.0, maximum=500.0, allow_none=True, other_kind_hint=(
        "add the atmosphere to a gauge reading"), metadata={"description": (
            "peak cylinder pressure, absolute (a gauge reading plus the atmosphere)")})
    ignition_voltage = Quantity("voltage", minimum=1.0, maximum=100.0, bare_unit="kV", allow_none=True)
    bore = Quantity("length", minimum=10.0, maximum=1000.0, bare_unit="mm", allow_none=True)
    stroke = Quantity("length", minimum=5.0, maximum=2000.0, bare_unit="mm", allow_none=True)
    rod_length = Quantity("length", minimum=10.0, maximum=5000.0, bare_unit="mm", allow_none=True)
    spark_advance = Quantity("angle", minimum=-20.0, maximum=90.0, bare_unit="degrees before TDC", allow_none=True)
    max_rpm = Quantity("speed", minimum=500.0, maximum=MAX_RPM, bare_unit="rpm", allow_none=True, metadata={
        "description": "the engine's highest speed, revolutions per minute (Hz is not read). With stroke and "
                       "rod_length (and rod_material, reciprocating_mass, rod_section_area) the piston's extra "
                       "travel towards the head at speed is estimated and taken from the piston margin, unless "
                       "the dynamic_allowance option is given", "example": 7000})
    rod_material = Choice(ROD_MATERIALS, {"aluminum": "aluminium"}, allow_none=True,
                          metadata={"description": "the connecting rod's material, for its stiffness (Young's "
                                                   "modulus); default aluminium, the most compliant."})
    reciprocating_mass = Quantity("mass", minimum=1.0, maximum=100_000.0, bare_unit="g", allow_none=True, metadata={
        "description": "mass moving with the piston: piston, rings, pin, clips and about a third of the rod "
                       "(its small end), one cylinder", "example": 520})
    rod_section_area = Quantity("area", minimum=5.0, maximum=50_000.0, bare_unit="mm**2", allow_none=True, metadata={
        "description": "the connecting rod's smallest cross-section (its beam), for its stretch", "example": 150})
    spot_face_diameter = Quantity(
        "length", minimum=SEAT_DIAMETER_RANGE_MM[0], maximum=SEAT_DIAMETER_RANGE_MM[1], bare_unit="mm",
        allow_none=True, metadata={"description": "flat seat: the machined face the gasket bears on; conical seat: "
                                                  "the taper's mouth at the seat face", "example": 20.0})
    counterbore_diameter = Quantity(
        "length", minimum=SEAT_DIAMETER_RANGE_MM[0], maximum=SEAT_DIAMETER_RANGE_MM[1], bare_unit="mm",
        allow_none=True, metadata={"description": "a counterbore around the plug's hex: the hex must turn in it"})
    seat_angle = Quantity("angle", minimum=SEAT_ANGLE_RANGE_DEG[0], maximum=SEAT_ANGLE_RANGE_DEG[1], bare_unit="deg",
                          allow_none=True, metadata={"description": "conical seat: the taper's included angle",
                                                     "example": 63.0})
    insert = fields.Nested(InsertSchema, allow_none=True, metadata={
        "description": "a thread-repair insert in the port, if it has one"})


class StoredHeadSchema(PortDimensionsSchema):
    head_id = fields.String(required=True, validate=IDENTIFIER, metadata={"example": "DEMO-H-VAN-I4"})
    description = fields.String(load_default="", validate=validate.Length(max=500))
    thread = Thread(required=True)
    seat = Choice(SEATS, SEAT_ALIASES, required=True)


class HeadInputSchema(PortDimensionsSchema):
    """A head in a check: `{"head_id": ...}` for a stored head, or the port inline."""

    rules = (*PortDimensionsSchema.rules, head_reference_or_inline)

    head_id = fields.String(validate=IDENTIFIER, metadata={"description": "a stored head; give it alone"})


class OptionsSchema(RuledSchema):
    """Check options; each default is listed in docs/engineering.md and, when applied, in the
    result's assumptions."""

    class Meta:
        unknown = RAISE

    min_clearance = Quantity("length", minimum=0.0, maximum=50.0, bare_unit="mm",
                             metadata={"description": "default 1.5 mm (common practice)"})
    flush_tolerance = Quantity("length", minimum=0.0, maximum=10.0, bare_unit="mm",
                               metadata={"description": "default 0.5 mm (common practice)"})
    max_protrusion = Quantity("length", minimum=0.0, maximum=10.0, bare_unit="mm", metadata={
        "description": "REACH_LONG fails when the plug's threads stand further than this into the chamber (long "
                       "side, worst case); default one pitch of the port's thread"})
    max_recess = Quantity("length", minimum=0.0, maximum=20.0, bare_unit="mm", metadata={
        "description": "REACH_SHORT fails when the thread end stops further than this short of the chamber "
                       "(short side, worst case); default two pitches of the port's thread"})
    gasket_condition = Choice(GASKET_CONDITIONS, {"re-used": "reused", "used": "reused"}, metadata={
        "description": "new (default) or reused: a re-used gasket is already crushed, so it sits thinner (a further "
                       "1/12 turn of the plug's pitch) and takes the smaller turn angle. Alias: re-used"})
    indexing_washer = Quantity("length", minimum=0.0, maximum=MAX_GASKET_MM, bare_unit="mm", metadata={
        "description": "thickness of an indexing washer under a flat-seat plug's gasket: added to the stack (the "
                       "plug sits that much further out) and noted for its longer heat path"})
    dynamic_allowance = Quantity("length", minimum=0.0, maximum=10.0, bare_unit="mm", metadata={
        "description": "taken from the piston and valve margins: how much nearer they come at speed. Default: for "
                       "the piston, the running allowance estimated from the head's max_rpm and rod when it gives "
                       "them; otherwise 0 mm. Given, it wins over the estimate"})
    stack = Choice(STACKS, {"worst-case": "worst_case", "worstcase": "worst_case"})
    torque = Quantity("torque", minimum=0.0, maximum=500.0, bare_unit="N*m",
                      metadata={"description": "planned installation torque"})
    lubrication = Choice(LUBRICATIONS, {"anti-seize": "anti_seize", "antiseize": "anti_seize", "oil": "oiled"})
    gap = Quantity("length", minimum=0.0, maximum=5.0, bare_unit="mm", metadata={"description": "planned gap"})
    require = fields.List(Choice(CHECK_NAMES), metadata={
        "description": "checks whose NOT_CHECKED becomes a fail"})


class FitCheckRequestSchema(Schema):
    class Meta:
        unknown = RAISE

    plug = fields.Nested(PlugInputSchema, required=True)
    head = fields.Nested(HeadInputSchema, required=True)
    options = fields.Nested(OptionsSchema, load_default=dict)


# --- from loaded dicts to the engine's records -----------------------------------------

_PLUG_FIELDS = ("reach", "gasket_thickness", "firing_end", "hex", "resistor", "terminal_height", "gap",
                "gasket_outside_diameter", "seat_diameter")
_PORT_FIELDS = ("port_depth", "design_reach", "port_depth_long_side", "piston_clearance", "seat_to_piston",
                "valve_clearance", "seat_to_valve", "well_bore", "hex", "resistor_required", "material",
                "compression_ratio", "forced_induction", "max_rpm", "rod_material", "spot_face_diameter",
                "counterbore_diameter")
_PORT_RENAMED = (("intake_pressure", "intake_pressure_bar"), ("boost_pressure", "boost_pressure_bar"),
                 ("intake_temperature", "intake_temperature_k"),
                 ("peak_pressure", "peak_pressure_bar"), ("ignition_voltage", "ignition_voltage_kv"),
                 ("bore", "bore_mm"), ("stroke", "stroke_mm"), ("rod_length", "rod_length_mm"),
                 ("spark_advance", "spark_advance_deg"), ("plug_inclination", "plug_inclination_deg"),
                 ("reciprocating_mass", "reciprocating_mass_g"), ("rod_section_area", "rod_section_area_mm2"),
                 ("seat_angle", "seat_angle_deg"))


def plug_spec(data: dict) -> PlugSpec:
    """A loaded plug dict (inline or stored) as the engine's record."""
    heat = data.get("heat_range")
    return PlugSpec(
        thread=data["thread"], seat=data["seat"],
        heat_range=HeatRange(heat["scale"], heat["value"]) if heat else None,
        seat_angle_deg=data.get("seat_angle"),
        **{name: data.get(name) for name in _PLUG_FIELDS})


def port_spec(data: dict) -> PortSpec:
    """A loaded head dict (inline or stored) as the engine's record."""
    band, boot, insert = data.get("heat_range_band"), data.get("boot_range"), data.get("insert")
    return PortSpec(
        thread=data["thread"], seat=data["seat"],
        heat_range_band=HeatRangeBand(band["scale"], band["min"], band["max"]) if band else None,
        boot_range=Span(boot["min"].nominal, boot["max"].nominal) if boot else None,
        insert=Insert(insert["kind"], insert.get("length"), insert.get("outer_thread"), insert.get("material"))
        if insert else None,
        **{name: data.get(name) for name in _PORT_FIELDS},
        **{new: data.get(old) for old, new in _PORT_RENAMED})


def options_from(data: dict | None) -> Options:
    data = data or {}
    return Options(
        min_clearance=data.get("min_clearance"), flush_tolerance=data.get("flush_tolerance"),
        max_protrusion=data.get("max_protrusion"), max_recess=data.get("max_recess"),
        gasket_condition=data.get("gasket_condition") or "new", indexing_washer=data.get("indexing_washer"),
        dynamic_allowance=data.get("dynamic_allowance"), stack=data.get("stack") or "worst_case",
        torque=data.get("torque"), lubrication=data.get("lubrication"), gap=data.get("gap"),
        require=frozenset(data.get("require") or ()))
