"""The state one fit check builds up: inputs, derived geometry, and what checks found.

Checks read the inputs and the geometry and append to `findings`, `analysis` and
`assumptions` through the small helpers here, so every check reports missing data,
defaults and requirements the same way.
"""
from __future__ import annotations

from functools import lru_cache
from operator import itemgetter
from typing import NamedTuple

from .catalog import Catalog, TorqueGuide
from .defaults import (
    CAUTIONS,
    DYNAMIC_ALLOWANCE_MM,
    FLUSH_TOLERANCE_MM,
    MAX_PROTRUSION_PITCHES,
    MAX_RECESS_PITCHES,
    MIN_CLEARANCE_MM,
    RUNNING_CAUTION,
    Default,
)
from .designation import parse_designation
from .model import Analysis, Finding, Options, PlugSpec, PortSpec, SourcedValue, Value, least_sure
from .running import (
    BEARING_CLEARANCE_MM,
    BEARING_CLEARANCE_SOURCE,
    INERTIA_LOAD_SOURCE,
    ROD_MATERIAL_ASSUMED,
    ROD_STRETCH,
    ROD_STRETCH_SOURCE,
    RULE_OF_THUMB,
    RULE_OF_THUMB_SOURCE,
    SPEED_BANDS_RPM,
    YOUNGS_MODULUS_SOURCE,
    running_allowance,
)
from .stack import Bounds, Stack


class Skip(NamedTuple):
    """A check's NOT_CHECKED finding for one reason, made once in both severities: `info`,
    or `fail` when the request requires the check. Findings are immutable, so every
    result shares them; checks whose reasons are fixed build theirs at import."""

    check: str
    info: Finding
    fail: Finding


@lru_cache(maxsize=1024)
def skip_reason(check: str, missing: str) -> Skip:
    message = f"The {check.replace('_', ' ')} check was not made: {missing}."
    return Skip(check, Finding("NOT_CHECKED", check, "info", message, {}),
                Finding("NOT_CHECKED", check, "fail", message, {}))


def _default_note(name: str, default: Default) -> str:
    return f"{name} not given: {default.value:g} mm used ({default.source})"


_MIN_CLEARANCE_NOTE = _default_note("min_clearance", MIN_CLEARANCE_MM)
_FLUSH_TOLERANCE_NOTE = _default_note("flush_tolerance", FLUSH_TOLERANCE_MM)
_DYNAMIC_ALLOWANCE_NOTE = _default_note("dynamic_allowance", DYNAMIC_ALLOWANCE_MM)


@lru_cache(maxsize=64)
def _default_reach_limits(thread: str) -> tuple[tuple[float | None, str | None], tuple[float | None, str | None]]:
    """The default `max_protrusion` and `max_recess` of a port thread, counted in its
    pitches, each with the assumption that says so; (None, None) when the designation
    gives no pitch. Keyed by the designation alone, so the look-up hashes one string."""
    pitch = (parse_designation(thread) or (0.0, None))[1]

    def default(name: str, pitches: Default) -> tuple[float | None, str | None]:
        if pitch is None:
            return None, None
        value = pitches.value * pitch
        return value, f"{name} not given: {value:g} mm used, {pitches.source}"

    return default("max_protrusion", MAX_PROTRUSION_PITCHES), default("max_recess", MAX_RECESS_PITCHES)


# Which entry of a `Bounds` a verdict reads, per stack option (see `FitContext.low`).
_WORST_CASE_LOW, _WORST_CASE_HIGH = itemgetter(1), itemgetter(2)  # Bounds.min, Bounds.max
_RSS_LOW, _RSS_HIGH = itemgetter(3), itemgetter(4)  # Bounds.rss_min, Bounds.rss_max

_SEVERITY_RANK = {"info": 0, "warn": 1, "fail": 2}
_new = tuple.__new__


class FitContext:
    __slots__ = (
        "analysis",
        "assumptions",
        "catalog",
        "cautions",
        "findings",
        "gasket",
        "geometry",
        "high",
        "installable",
        "low",
        "options",
        "piston_allowance_values",
        "plug",
        "port",
        "port_depth",
        "port_depth_long",
        "shell_edge_margin",
        "shell_edge_offset",
        "thread_end",
        "tip",
        "tip_margin",
        "torque",
        "worst",
    )

    def __init__(self, plug: PlugSpec, port: PortSpec, options: Options, catalog: Catalog) -> None:
        self.plug = plug
        self.port = port
        self.options = options
        self.catalog = catalog
        self.findings: list[Finding] = []
        self.analysis: Analysis = {}
        self.assumptions: list[str] = []
        self.torque: TorqueGuide | None = None
        # The result's cautions: the general ones, and more when a check finds a reason.
        self.cautions: tuple[str, ...] = CAUTIONS
        self.geometry: dict[str, Bounds] = {}
        # Stacks along the plug axis (mm from the head's seat face); None when the
        # inputs needed for them are missing. Filled by `geometry.derive`.
        self.gasket: Stack | None = None
        self.port_depth: Stack | None = None
        self.port_depth_long: Stack | None = None
        self.thread_end: Stack | None = None  # e
        self.tip: Stack | None = None  # t
        # The two features the piston margin is the smaller of, and r·tan θ.
        self.tip_margin: Bounds | None = None
        self.shell_edge_margin: Bounds | None = None
        self.shell_edge_offset = 0.0
        # How the piston margin's allowance was found, for `analysis.piston`
        # (see `piston_allowance`); None until the piston margin is derived.
        self.piston_allowance_values: dict[str, Value | SourcedValue | str] | None = None
        # A plug of another thread or seat cannot be installed: no position, no torque.
        self.installable = plug.thread == port.thread and plug.seat == port.seat
        # The worst severity found so far (0 info, 1 warn, 2 fail), kept as findings are
        # added so the verdict needs no second pass over them.
        self.worst = 0
        # `low(entry)` and `high(entry)`: the bounds a verdict uses, worst case unless the
        # request asked for RSS. Chosen once here as C-level getters, because the checks
        # call them several times per fit and a method call costs more than the lookup.
        if options.stack == "rss":
            self.low, self.high = _RSS_LOW, _RSS_HIGH
        else:
            self.low, self.high = _WORST_CASE_LOW, _WORST_CASE_HIGH

    # --- reporting -------------------------------------------------------------------
    def add(self, code: str, check: str, severity: str, message: str, **values: Value | SourcedValue) -> None:
        rank = _SEVERITY_RANK[severity]
        self.worst = max(self.worst, rank)
        # tuple.__new__ skips the NamedTuple's Python-level __new__; same fields, same order.
        self.findings.append(_new(Finding, (code, check, severity, message, values)))

    def not_checked(self, check: str, missing: str) -> None:
        """Record that `check` could not run; a required check turns this into a fail."""
        self.skip(skip_reason(check, missing))

    def skip(self, reason: Skip) -> None:
        """`not_checked` with a reason made beforehand by `skip_reason`."""
        if reason.check in self.options.require:
            self.worst = 2
            self.findings.append(reason.fail)
        else:
            self.findings.append(reason.info)

    def assume(self, text: str) -> None:
        self.assumptions.append(text)

    # --- options with their documented defaults ---------------------------------------
    # Each default is named once in the assumptions, however many checks use it. The
    # notes are shared constant strings, so the membership test is an identity check on
    # a short list (cheaper than keeping a set per fit). Written out per option, not
    # through a shared helper, because the checks call these on every fit.
    def min_clearance(self) -> float:
        given = self.options.min_clearance
        if given is not None:
            return given
        if _MIN_CLEARANCE_NOTE not in self.assumptions:
            self.assumptions.append(_MIN_CLEARANCE_NOTE)
        return MIN_CLEARANCE_MM.value

    def flush_tolerance(self) -> float:
        given = self.options.flush_tolerance
        if given is not None:
            return given
        if _FLUSH_TOLERANCE_NOTE not in self.assumptions:
            self.assumptions.append(_FLUSH_TOLERANCE_NOTE)
        return FLUSH_TOLERANCE_MM.value

    # The reach check's fail levels are noted only where they decide a finding's severity
    # (see checks.check_reach), so each returns the note with the value.
    def max_protrusion(self) -> tuple[float | None, str | None]:
        """REACH_LONG's fail level, and the note when it is the default (one pitch);
        (None, None) when the port's thread gives no pitch: then it only warns."""
        given = self.options.max_protrusion
        return (given, None) if given is not None else _default_reach_limits(self.port.thread)[0]

    def max_recess(self) -> tuple[float | None, str | None]:
        """REACH_SHORT's fail level, and the note when it is the default (two pitches)."""
        given = self.options.max_recess
        return (given, None) if given is not None else _default_reach_limits(self.port.thread)[1]

    def dynamic_allowance(self) -> float:
        given = self.options.dynamic_allowance
        if given is not None:
            return given
        if _DYNAMIC_ALLOWANCE_NOTE not in self.assumptions:
            self.assumptions.append(_DYNAMIC_ALLOWANCE_NOTE)
        return DYNAMIC_ALLOWANCE_MM.value

    def valve_allowance(self) -> float:
        """`a` of the valve margin: `dynamic_allowance` (the option or its default). A running
        allowance estimated for the piston is not the valves': the rod's stretch moves the piston."""
        if self.options.dynamic_allowance is None and self.piston_allowance_values is not None \
                and self.piston_allowance_values["dynamic_allowance_method"] in (ROD_STRETCH, RULE_OF_THUMB):
            self.assumptions.append(_VALVE_WITHOUT_RUNNING_NOTE)
            return DYNAMIC_ALLOWANCE_MM.value
        return self.dynamic_allowance()

    def piston_allowance(self) -> float:
        """`a` of the piston margin: the `dynamic_allowance` option when given; else the
        running allowance estimated from the head's `max_rpm` and rod (`running.py`);
        else the option's default (0). Records how, for `analysis.piston`. The valve
        margin keeps `dynamic_allowance` alone: the rod's stretch moves the piston, not the valves."""
        port, given = self.port, self.options.dynamic_allowance
        if given is not None:
            if port.max_rpm is not None:
                self.assumptions.append(_OPTION_WINS_NOTE)
            self.piston_allowance_values = {"dynamic_allowance": (given, "length"),
                                            "dynamic_allowance_method": "option"}
            return given
        if port.max_rpm is None:
            if port.rod_material is not None or port.reciprocating_mass_g is not None \
                    or port.rod_section_area_mm2 is not None:
                self.assumptions.append(_NO_SPEED_NOTE)
            self.piston_allowance_values = _DEFAULT_ALLOWANCE_VALUES
            return self.dynamic_allowance()
        estimate = _running_estimate(port.max_rpm, port.rod_material, port.stroke_mm, port.rod_length_mm,
                                     port.reciprocating_mass_g, port.rod_section_area_mm2)
        self.assumptions.extend(estimate.notes)
        self.cautions = (*self.cautions, RUNNING_CAUTION)
        self.piston_allowance_values = estimate.values
        return estimate.allowance_mm


_DEFAULT_ALLOWANCE_VALUES: dict[str, Value | SourcedValue | str] = {
    "dynamic_allowance": (DYNAMIC_ALLOWANCE_MM.value, "length"), "dynamic_allowance_method": "default"}
_VALVE_WITHOUT_RUNNING_NOTE = (f"valve: dynamic_allowance not given: {DYNAMIC_ALLOWANCE_MM.value:g} mm used for the "
                               "valve margin; the running allowance is the piston's (the rod's stretch moves the "
                               "piston, not the valves)")
_OPTION_WINS_NOTE = ("piston: the dynamic_allowance option is used; the running allowance the head's max_rpm "
                     "would give is not estimated")
_NO_SPEED_NOTE = ("piston: the head gives rod data but no max_rpm: no running allowance is estimated (give "
                  "max_rpm to have it estimated)")


class _RunningEstimate(NamedTuple):
    """A running allowance with the assumptions and `analysis.piston` values that say how."""

    allowance_mm: float
    notes: tuple[str, ...]
    values: dict[str, Value | SourcedValue | str]


@lru_cache(maxsize=256)
def _running_estimate(max_rpm: float, rod_material: str | None, stroke_mm: float | None,
                      rod_length_mm: float | None, reciprocating_mass_g: float | None,
                      rod_section_area_mm2: float | None) -> _RunningEstimate:
    """`running.running_allowance` with the assumptions that say how it was found and the
    values `analysis.piston` lists; made once per distinct head (build lists repeat them)."""
    estimate = running_allowance(max_rpm, rod_material, stroke_mm, rod_length_mm, reciprocating_mass_g,
                                 rod_section_area_mm2)
    material, allowance = estimate.rod_material, estimate.allowance_mm
    notes = []
    if rod_material is None:
        notes.append(f"piston: rod_material not given: {ROD_MATERIAL_ASSUMED} assumed for the running allowance "
                     "(the most compliant rod, so the allowance is not underestimated)")
    values: dict[str, Value | SourcedValue | str] = {}
    if estimate.method == ROD_STRETCH:
        assert estimate.inertia_load_n is not None and estimate.rod_stretch_mm is not None
        assert stroke_mm is not None and rod_length_mm is not None
        assert reciprocating_mass_g is not None and rod_section_area_mm2 is not None
        grade = least_sure("derived", "from memory", "common practice")
        values.update({
            "dynamic_allowance": (allowance, "length", grade, "rod_stretch + bearing_clearance"),
            "dynamic_allowance_method": estimate.method, "max_rpm": (max_rpm, "speed"), "rod_material": material,
            "stroke": (stroke_mm, "length"), "rod_length": (rod_length_mm, "length"),
            "reciprocating_mass": (reciprocating_mass_g, "mass"),
            "rod_section_area": (rod_section_area_mm2, "area"),
            "inertia_load": (estimate.inertia_load_n, "force", "derived", INERTIA_LOAD_SOURCE),
            "youngs_modulus": (estimate.youngs_modulus_mpa, "stress", "from memory", YOUNGS_MODULUS_SOURCE),
            "rod_stretch": (estimate.rod_stretch_mm, "length", "from memory", ROD_STRETCH_SOURCE),
            "bearing_clearance": (BEARING_CLEARANCE_MM, "length", "common practice", BEARING_CLEARANCE_SOURCE)})
        notes.append(f"piston: running allowance at {max_rpm:,.0f} rpm estimated as {allowance:.3f} mm and taken from "
                     f"the piston margin: the {material} rod stretches {estimate.rod_stretch_mm:.3f} mm under the "
                     "inertia load at exhaust-stroke top dead centre, and the bearing clearances add "
                     f"{BEARING_CLEARANCE_MM:.3f} mm (common practice, from memory). Left out: the rod's thermal "
                     "growth, the crank's bending, the piston's rocking")
        if material == "aluminium":
            notes.append("piston: an aluminium rod also grows with heat, often by more than it stretches; the "
                         "running allowance leaves that out: add it through the dynamic_allowance option")
    else:
        values.update({"dynamic_allowance": (allowance, "length", "common practice", RULE_OF_THUMB_SOURCE),
                       "dynamic_allowance_method": estimate.method, "max_rpm": (max_rpm, "speed"),
                       "rod_material": material})
        if estimate.band_top_rpm is not None:
            values["speed_band_top"] = (estimate.band_top_rpm, "speed")
        band = f"up to {estimate.band_top_rpm:,.0f} rpm" if estimate.band_top_rpm is not None else \
            f"above {SPEED_BANDS_RPM[-1]:,.0f} rpm, grown with the square of the speed"
        missing = [name for name, value in (("reciprocating_mass", reciprocating_mass_g),
                                            ("rod_section_area", rod_section_area_mm2), ("stroke", stroke_mm),
                                            ("rod_length", rod_length_mm)) if value is None]
        listed = ", ".join(missing[:-1]) + " and " + missing[-1] if len(missing) > 1 else "".join(missing)
        why = f"{listed} not given" if missing else "the rod_length is not longer than half the stroke"
        notes.append(f"piston: running allowance at {max_rpm:,.0f} rpm taken as {allowance:.3f} mm from the rule of "
                     f"thumb for {material} rods {band} (common practice, from memory) and taken from the piston "
                     f"margin; {why}, so the rod's stretch is not estimated")
    return _RunningEstimate(allowance, tuple(notes), values)
