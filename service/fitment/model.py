"""Plain data the fit engine reads and writes: millimetres, newton-metres, bar, kelvin, kV.

Everything here is a float or a small immutable record so the engine can run a hundred
thousand checks a second without pint, Flask or a database in the way. Units are
converted at the boundary (`service.units`, `schemas/`) before anything reaches here.
"""
from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from operator import itemgetter
from typing import TYPE_CHECKING, NamedTuple, Self

from .stack import Bounds, Stack

if TYPE_CHECKING:  # pragma: no cover
    from .catalog import TorqueGuide


class Dim(Stack):
    """A length in mm with its tolerance; `plus` and `minus` are positive amounts.

    A value given without a tolerance is exact (plus = minus = 0): the contract forbids
    adding tolerances silently. A Dim is a one-term tolerance stack: it carries the
    squares of its tolerances too, laid out as `stack.Stack` expects, so the engine adds
    and subtracts Dims without converting them first.
    """

    __slots__ = ()

    def __new__(cls, nominal: float, plus: float = 0.0, minus: float = 0.0) -> Self:
        return tuple.__new__(cls, (nominal, plus, minus, plus * plus, minus * minus))

    def __getnewargs__(self) -> tuple[float, float, float]:  # pickling and copy
        return self[0], self[1], self[2]

    def __repr__(self) -> str:
        return f"Dim(nominal={self[0]!r}, plus={self[1]!r}, minus={self[2]!r})"

    plus = property(itemgetter(1))
    minus = property(itemgetter(2))

    @property
    def is_exact(self) -> bool:
        return self[1] == 0.0 and self[2] == 0.0


@dataclass(frozen=True, slots=True)
class HeatRange:
    scale: str
    value: float


@dataclass(frozen=True, slots=True)
class HeatRangeBand:
    scale: str
    min: float
    max: float


@dataclass(frozen=True, slots=True)
class Span:
    """A closed range of lengths in mm (for example where a boot engages a terminal)."""

    min: float
    max: float


@dataclass(frozen=True, slots=True)
class PlugSpec:
    """A candidate plug. `thread` is a full designation such as 'M14x1.25'."""

    thread: str
    seat: str
    reach: Dim | None = None
    gasket_thickness: Dim | None = None
    firing_end: Dim | None = None
    hex: float | None = None
    resistor: bool | None = None
    terminal_height: Dim | None = None
    heat_range: HeatRange | None = None
    gap: float | None = None
    # The seat's diameters and angle (issue 18): a flat seat's gasket outside diameter; a
    # conical seat's included taper angle (degrees) and its largest diameter.
    gasket_outside_diameter: float | None = None
    seat_angle_deg: float | None = None
    seat_diameter: float | None = None


@dataclass(frozen=True, slots=True)
class Insert:
    """A thread-repair insert in the port: `kind` one of INSERT_KINDS; `length` from the
    head's seat face to the insert's chamber end; `outer_thread` the designation of a solid
    insert's outer thread (a coil insert's follows its tap, `insert.coil_outer_thread`);
    `material` one of INSERT_MATERIALS (None: not given)."""

    kind: str
    length: Dim | None = None
    outer_thread: str | None = None
    material: str | None = None


INSERT_KINDS = ("coil", "solid")
INSERT_MATERIALS = ("stainless_steel", "carbon_steel")


@dataclass(frozen=True, slots=True)
class PortSpec:
    """A cylinder-head plug port and, optionally, the engine conditions at the plug."""

    thread: str
    seat: str
    port_depth: Dim | None = None
    design_reach: Dim | None = None
    port_depth_long_side: Dim | None = None
    piston_clearance: Dim | None = None
    seat_to_piston: Dim | None = None
    valve_clearance: Dim | None = None
    seat_to_valve: Dim | None = None
    # Angle in degrees between the plug axis and the cylinder axis (None: not given, 0 assumed).
    plug_inclination_deg: float | None = None
    well_bore: float | None = None
    hex: float | None = None
    resistor_required: bool | None = None
    material: str | None = None
    heat_range_band: HeatRangeBand | None = None
    boot_range: Span | None = None
    compression_ratio: float | None = None
    intake_pressure_bar: float | None = None  # absolute
    boost_pressure_bar: float | None = None  # gauge: above the atmosphere (give this or the absolute)
    forced_induction: bool | None = None
    intake_temperature_k: float | None = None
    peak_pressure_bar: float | None = None
    ignition_voltage_kv: float | None = None
    bore_mm: float | None = None
    stroke_mm: float | None = None
    rod_length_mm: float | None = None
    spark_advance_deg: float | None = None
    # The running clearance (see `running.py`): the engine's highest speed, the rod's
    # material (one of running.ROD_MATERIALS), the reciprocating mass and the rod's
    # smallest section.
    max_rpm: float | None = None
    rod_material: str | None = None
    reciprocating_mass_g: float | None = None
    rod_section_area_mm2: float | None = None
    # The seat's machining (issue 18): the spot face a flat seat's gasket bears on (on a
    # conical port: the taper's mouth at the seat face), a counterbore around the plug's
    # hex, and a conical seat's included taper angle (degrees).
    spot_face_diameter: float | None = None
    counterbore_diameter: float | None = None
    seat_angle_deg: float | None = None
    insert: Insert | None = None


@dataclass(frozen=True, slots=True)
class Options:
    """Check options; `None` means 'use the documented default' (see `defaults.py`)."""

    min_clearance: float | None = None
    flush_tolerance: float | None = None
    max_protrusion: float | None = None
    max_recess: float | None = None
    dynamic_allowance: float | None = None
    gasket_condition: str = "new"  # or "reused" (defaults.GASKET_CONDITIONS)
    indexing_washer: float | None = None
    stack: str = "worst_case"
    torque: float | None = None
    lubrication: str | None = None
    gap: float | None = None
    require: frozenset[str] = frozenset()


# A finding value: (number, quantity kind). Kinds: length, torque, pressure, voltage,
# force, stress, ratio, angle, temperature, count, speed (rpm), mass (g), area (mm²).
# The serialiser turns them into units.
Value = tuple[float, str]
# An analysis value that says how sure it is: (number, kind, grade, source), the grade
# one of GRADES (as in the shared reference values) and the source a sentence.
SourcedValue = tuple[float, str, str, str]
GRADES = ("published", "derived", "from memory", "common practice")


def least_sure(*grades: str) -> str:
    """The grade a value computed from values of these grades has: the last of them in
    GRADES (a product of a published and a from-memory number is from memory)."""
    return max(grades, key=GRADES.index)
# What a check computed, per check: quantities (sourced or not), and the odd name (the
# piston margin's governing feature, "tip" or "shell_edge").
Analysis = dict[str, Mapping[str, Value | SourcedValue | str]]


class Finding(NamedTuple):
    """One thing a check found. `message` is a template: `{name}` placeholders are
    filled from `values` by the serialiser in the client's units, so the engine never
    formats numbers and imperial answers read in inches."""

    code: str
    check: str
    severity: str
    message: str
    values: dict[str, Value | SourcedValue] = {}  # noqa: RUF012 - never mutated: a finding is immutable once made


@dataclass(slots=True)
class FitResult:
    verdict: str
    thread: str
    findings: list[Finding]
    geometry: dict[str, Bounds]
    analysis: Analysis
    torque: TorqueGuide | None
    assumptions: list[str]
    cautions: tuple[str, ...]
    engine_version: str
    catalog_version: str

    def codes(self) -> list[str]:
        return [f.code for f in self.findings]
