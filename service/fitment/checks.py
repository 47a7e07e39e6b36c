"""The checks, one function each, run in the order of `CHECKS`.

A check reads the context (inputs and the geometry already derived) and reports through
`ctx.add` (a finding), `ctx.not_checked` (data missing) and `ctx.analysis`. A check that
finds nothing wrong adds nothing. Messages are templates: `{name}` is filled from the
finding's values in the client's units by the serialiser, so no number is formatted here.
To add a check: write one function here, add it to `CHECKS`, and add its code to the
README's table of finding codes.
"""
from __future__ import annotations

import itertools
import math
from collections.abc import Callable
from functools import lru_cache
from typing import NamedTuple

from .context import FitContext, Skip, skip_reason
from .defaults import ANTI_SEIZE_CAUTION, CONICAL_SEAT_ANGLE_DEG
from .designation import format_designation, parse_designation
from .geometry import SHELL_EDGE, TIP
from .insert import (
    ALUMINIUM_COLD_CAUTION,
    COIL,
    COIL_TAP_SOURCE,
    DEFAULT_MATERIAL,
    INSERT_CAUTION,
    INSERT_MATERIAL_SHEAR_STRENGTH,
    KIND_WORDS,
    SOLID,
    coil_outer_thread,
)
from .model import Insert, SourcedValue, Value, least_sure
from .running import ROD_STRETCH, RULE_OF_THUMB
from .seat import (
    SEAT_ANGLE_TOLERANCE_DEG,
    SIX_POINT,
    TWELVE_POINT,
    across_corners,
    angles_differ,
    gasket_overhangs,
    hex_form,
    hex_trapped,
    taper_mouth_bare,
)
from .spark import (
    STANDARD_INTAKE_PRESSURE_BAR,
    STANDARD_INTAKE_TEMPERATURE_K,
    TYPICAL_FULL_LOAD_SPARK_ADVANCE_DEG,
    TYPICAL_ROD_RATIO,
    estimate_spark,
    rod_ratio_of,
)
from .stack import Stack
from .strength import (
    HEAD_MATERIAL_SHEAR_STRENGTH,
    EngagementAllowances,
    ThreadStrength,
    engaged_length_mm,
    port_thread_limits,
    thread_strength,
)
from .threads import ThreadLimits
from .torque import (
    ABOVE,
    BELOW,
    FAR_ABOVE,
    LUBRICATION_WORDS,
    WITHIN,
    place,
    torque_limits,
)

LENGTH = "length"
TORQUE = "torque"

# Lengths closer than a nanometre are equal: it keeps a verdict from flipping on the
# last bit of a unit conversion (0.75 in -> 19.049999999999997 mm).
EPSILON_MM = 1e-9


def _not_given_table(check: str, *inputs: str) -> dict[tuple[bool, ...], Skip]:
    """Every "<input> and <input> not given" reason for a check's optional inputs, keyed by
    which of them are missing (True = missing). Built once at import: most requests leave
    the electrical and boot data out, so these checks run on every fit just to say so,
    and looking the reason up is cheaper than joining it each time."""
    table = {}
    for pattern in itertools.product((False, True), repeat=len(inputs)):
        missing = [text for text, absent in zip(inputs, pattern, strict=False) if absent]
        if missing:
            table[pattern] = skip_reason(check, " and ".join(missing) + " not given")
    return table


_GAP_VOLTAGE_NOT_GIVEN = _not_given_table("gap_voltage", "a gap (the plug's or the gap option)",
                                          "the head's compression_ratio", "the head's ignition_voltage")
_HEAT_RANGE_NOT_GIVEN = _not_given_table("heat_range", "the head's heat_range_band", "the plug's heat_range")
_BOOT_NOT_GIVEN = _not_given_table("boot", "the plug's terminal_height", "the head's boot_range",
                                   "the plug's gasket_thickness")
# The reasons that never change, for the checks that run on every fit.
_TOOL_CLEARANCE_NOT_GIVEN = skip_reason("tool_clearance", "needs the plug's hex and the head's well_bore")
_HEX_NOT_GIVEN = skip_reason("hex", "needs the plug's hex and the hex the head's tooling is made for")
_RESISTOR_UNKNOWN = skip_reason("resistor", "the head does not say whether a resistor plug is required")
_RESISTOR_NOT_SAID = skip_reason("resistor", "the head requires a resistor plug and the plug does not say if it "
                                             "has one")
_THREAD_STRENGTH_NO_PITCH = skip_reason("thread_strength", "the port's thread designation gives no pitch")


def check_thread(ctx: FitContext) -> None:
    plug, port = ctx.plug.thread, ctx.port.thread
    if plug == port:
        return
    plug_numbers, port_numbers = parse_designation(plug), parse_designation(port)
    if plug_numbers is None or port_numbers is None:
        ctx.add("THREAD_MISMATCH", "thread", "fail",
                f"The plug's thread {plug} does not match the port's {port}: it cannot be fitted.")
        return
    (plug_diameter, plug_pitch), (port_diameter, port_pitch) = plug_numbers, port_numbers
    if plug_diameter < port_diameter:
        message = (f"The plug's thread {plug} is smaller than the port's {port}: it does not engage the head's "
                   "thread at all and cannot be fitted.")
    elif plug_diameter > port_diameter:
        message = (f"The plug's thread {plug} is larger than the port's {port}: it does not start in the port, "
                   "and forcing it in damages the head's threads.")
    else:
        message = (f"The plug's thread {plug} has another pitch than the port's {port}: it starts, then "
                   "cross-threads and damages the head's threads.")
    ctx.add("THREAD_MISMATCH", "thread", "fail", message,
            plug_diameter=(plug_diameter, LENGTH), plug_pitch=(plug_pitch or 0.0, LENGTH),
            port_diameter=(port_diameter, LENGTH), port_pitch=(port_pitch or 0.0, LENGTH))


def check_seat(ctx: FitContext) -> None:
    plug, port = ctx.plug.seat, ctx.port.seat
    if plug == port:
        return
    ctx.add("SEAT_MISMATCH", "seat", "fail", _SEAT_MISMATCH_MESSAGES[plug == "conical"])


# Keyed by "the plug is the conical one"; built once rather than per finding.
_SEAT_MISMATCH_MESSAGES = {
    True: "Seat mismatch: a conical-seat plug in a flat-seat port has no gasket face to seal on: "
          "the seal leaks and the plug can loosen.",
    False: "Seat mismatch: a flat-seat plug in a conical-seat port seals on the edge of its gasket "
           "against the taper: the seal leaks and the reach is wrong.",
}

# Appended to every message that gives guidance (reach, gasket, torque).
GUIDANCE = " This is guidance: the engine maker's data comes first."


def check_gasket(ctx: FitContext) -> None:
    """A flat-seat plug needs its gasket; an indexing washer under it moves the plug out."""
    plug, washer = ctx.plug, ctx.options.indexing_washer
    if plug.seat == "flat" and plug.gasket_thickness is not None and plug.gasket_thickness.nominal <= EPSILON_MM:
        ctx.add("GASKET_MISSING", "gasket", "warn", _GASKET_MISSING_MESSAGE)
    if washer and plug.seat == "flat":
        ctx.add("INDEXING_WASHER", "gasket", "info", _INDEXING_WASHER_MESSAGE, washer=(washer, LENGTH))


_GASKET_MISSING_MESSAGE = (
    "A flat-seat plug with no gasket (0 mm) has no seal and no heat path through the gasket, and it sits a gasket's "
    "thickness deeper than its reach was made for: fit it with its gasket." + GUIDANCE)
_INDEXING_WASHER_MESSAGE = (
    "The indexing washer of {washer} under the gasket moves the plug {washer} outwards: its thread end and tip sit "
    "that much further from the chamber (the reach and clearance checks include it), and the extra joint lengthens "
    "the heat path from the plug to the head, so the plug runs hotter." + GUIDANCE)


def check_reach(ctx: FitContext) -> None:
    """Is the thread end at the chamber? REACH_LONG on the long side (threads in the chamber
    all round), REACH_SHORT on the short side (head threads exposed all round); a thread
    end between the break-outs of an inclined roof is the design state (info)."""
    geometry = ctx.geometry
    short_side, long_side = geometry.get("protrusion_short_side"), geometry.get("protrusion_long_side")
    if short_side is None or long_side is None:
        ctx.not_checked("reach", _missing_for_thread_end(ctx, need_port=True))
        return
    tolerance = ctx.flush_tolerance()
    standing = ctx.high(long_side)  # worst case: how far plug threads stand into the chamber
    exposed = -ctx.low(short_side)  # worst case: how far head threads are left bare
    inclined = long_side.nominal < short_side.nominal - EPSILON_MM
    too_long = _reach_finding(ctx, "REACH_LONG", standing, tolerance, ctx.max_protrusion(), inclined)
    too_short = _reach_finding(ctx, "REACH_SHORT", exposed, tolerance, ctx.max_recess(), inclined)
    if inclined and not (too_long or too_short) and short_side.nominal >= -EPSILON_MM \
            and long_side.nominal <= EPSILON_MM:
        ctx.add("REACH_INCLINED_ROOF", "reach", "info", _INCLINED_ROOF_MESSAGE,
                short_side=(short_side.nominal, LENGTH), long_side=(-long_side.nominal, LENGTH))


def _reach_finding(ctx: FitContext, code: str, distance: float, tolerance: float,
                   limit_and_note: tuple[float | None, str | None], inclined: bool) -> bool:
    """Fail past the limit (`max_protrusion`, `max_recess`), else warn past the flush
    tolerance; True when a finding was added. A default limit is noted when it decides
    a finding's severity."""
    limit, note = limit_and_note
    fails = limit is not None and distance > limit + EPSILON_MM
    if not fails and distance <= tolerance + EPSILON_MM:
        return False
    if note is not None:
        ctx.assume(note)
    geometry, reach = ctx.geometry, ctx.plug.reach
    assert reach is not None  # there is a protrusion
    values = {"distance": (distance, LENGTH), "flush_tolerance": (tolerance, LENGTH),
              # the reaches that put the thread end at the short and at the long break-out
              "fitting_reach_min": (reach.nominal - geometry["protrusion_short_side"].nominal, LENGTH),
              "fitting_reach_max": (reach.nominal - geometry["protrusion_long_side"].nominal, LENGTH)}
    if limit is not None:
        values["limit"] = (limit, LENGTH)
    ctx.add(code, "reach", "fail" if fails else "warn", _REACH_MESSAGES[code, fails, inclined], **values)
    return True


def _reach_messages() -> dict[tuple[str, bool, bool], str]:
    """Every reach message, keyed by (code, fails, inclined roof): built once at import."""
    what = {"REACH_LONG": "The plug's threads stand {distance} into the chamber all round (long side, worst case)",
            "REACH_SHORT": "The plug's thread end stops {distance} short of the chamber all round (short side, "
                           "worst case)"}
    limit = {"REACH_LONG": "more than the {limit} allowed (max_protrusion): the wrong plug for this port",
             "REACH_SHORT": "more than the {limit} allowed (max_recess): the wrong reach for this port"}
    why = {"REACH_LONG": "Threads in the chamber are a hot spot that can pre-ignite the charge; they carbon up, can "
                         "lock the plug and pull the head's threads out when it is removed, and they bring the "
                         "shell towards the piston and valves.",
           "REACH_SHORT": "The head's threads left bare carbon up, so the next plug is hard to fit, and the spark "
                          "sits shrouded in the bore."}
    fit = {False: "A plug of about {fitting_reach_min} reach (with the same gasket) fits flush.",
           True: "A plug of {fitting_reach_min} to {fitting_reach_max} reach (with the same gasket) puts its "
                 "thread end between the two break-outs of this inclined roof."}
    messages = {}
    for code, found in what.items():
        for fails in (False, True):
            for inclined in (False, True):
                level = limit[code] if fails else "beyond the flush tolerance of {flush_tolerance}"
                messages[code, fails, inclined] = f"{found}, {level}. {why[code]} {fit[inclined]}{GUIDANCE}"
    return messages


_REACH_MESSAGES = _reach_messages()
_INCLINED_ROOF_MESSAGE = (
    "The chamber roof is inclined and the plug's thread end lies between its two break-outs: its last "
    "{short_side} of thread stands in the chamber on the short side, and it stops {long_side} short of the "
    "chamber on the long side. That is how a plug sits in such a port, not a fault.")


def _missing_for_thread_end(ctx: FitContext, need_port: bool) -> str:
    missing = []
    if ctx.plug.reach is None:
        missing.append("the plug's reach")
    if ctx.gasket is None:
        missing.append(f"the plug's gasket thickness (no standard gasket for {ctx.plug.thread})")
    if need_port and ctx.port_depth is None:
        missing.append("the port's port_depth or design_reach")
    return " and ".join(missing) + " not given" if missing else "inputs incomplete"


class _Obstacle(NamedTuple):
    """What the piston and valve checks differ in, with every message text built once at
    import (these checks run on every fit, most often just to say data is missing)."""

    check: str
    code: str
    entry_name: str  # its margin's name in the geometry
    too_close: dict[str, str]  # message templates per feature: within the minimum clearance ...
    interfering: dict[str, str]  # ... and past the obstacle
    neither_given: Skip  # not-checked reasons
    needs_port_depth: Skip


def _obstacle(check: str, code: str, obstacle: str, seat_field: str, breakout_field: str) -> _Obstacle:
    parts = {TIP: "the electrode",
             SHELL_EDGE: "the low edge of the plug's shell (the plug is inclined {inclination} to the cylinder axis)"}
    return _Obstacle(
        check, code, f"{check}_margin",
        {feature: f"At its closest (worst case) the {obstacle} comes within {{margin}} of {part}, less than the "
                  "minimum clearance of {min_clearance} by {shortfall}: it can strike the plug."
         for feature, part in parts.items()},
        {feature: f"{part[0].upper()}{part[1:]} would meet the {obstacle}: at its closest (worst case) it reaches "
                  f"{{overlap}} past the {obstacle}. It needs {{shortfall}} more room to keep the minimum clearance "
                  "of {min_clearance}."
         for feature, part in parts.items()},
        skip_reason(check, f"the head gives neither {breakout_field} nor {seat_field}"),
        skip_reason(check, f"{breakout_field} needs the port's port_depth or design_reach"))


_PISTON = _obstacle("piston", "PISTON_CONTACT", "piston crown at top dead centre", "seat_to_piston",
                    "piston_clearance")
_VALVE = _obstacle("valve", "VALVE_CONTACT", "valve", "seat_to_valve", "valve_clearance")


def _clearance_check(ctx: FitContext, obstacle: _Obstacle, from_seat: object, from_breakout: object,
                     feature: str = TIP) -> None:
    margin = ctx.geometry.get(obstacle.entry_name)
    if margin is None:
        if from_seat is None and from_breakout is None:
            ctx.skip(obstacle.neither_given)
        elif ctx.tip is None:
            missing = "the plug's firing_end not given" if ctx.plug.firing_end is None and ctx.thread_end is not None \
                else _missing_for_thread_end(ctx, need_port=False)
            ctx.not_checked(obstacle.check, missing)
        else:
            ctx.skip(obstacle.needs_port_depth)
        return
    minimum = ctx.min_clearance()
    worst = ctx.low(margin)
    if worst >= minimum - EPSILON_MM:
        return
    template = obstacle.interfering[feature] if worst < 0 else obstacle.too_close[feature]
    values: dict[str, Value] = {"margin": (worst, LENGTH), "overlap": (max(0.0, -worst), LENGTH),
                                "min_clearance": (minimum, LENGTH), "shortfall": (minimum - worst, LENGTH)}
    if feature == SHELL_EDGE:
        values["inclination"] = (ctx.port.plug_inclination_deg or 0.0, "angle")
    running = ctx.piston_allowance_values if obstacle is _PISTON else None
    if running is not None and running["dynamic_allowance_method"] in _ESTIMATED:
        # The margin is the running one: say so, with the allowance and the speed.
        allowance, speed = running["dynamic_allowance"], running["max_rpm"]
        assert not isinstance(allowance, str) and not isinstance(speed, str)
        values["dynamic_allowance"], values["max_rpm"] = (allowance[0], LENGTH), (speed[0], "speed")
        template += _RUNNING_MARGIN
    ctx.add(obstacle.code, obstacle.check, "fail", template, **values)


_ESTIMATED = frozenset({ROD_STRETCH, RULE_OF_THUMB})
_RUNNING_MARGIN = (" The margin counts the piston's estimated running allowance of {dynamic_allowance} at "
                   "{max_rpm} (analysis.piston)." + GUIDANCE)


def check_piston(ctx: FitContext) -> None:
    """The piston margin is the smaller of the electrode tip's and the shell edge's, both
    less the piston's allowance (`FitContext.piston_allowance`: the dynamic_allowance option,
    else the running allowance from the head's max_rpm); the analysis names the feature
    that governs, gives both, and says how the allowance was found."""
    port = ctx.port
    feature = TIP
    if ctx.tip_margin is not None and ctx.shell_edge_margin is not None:
        # the feature whose margin is smaller at the bound the verdict reads (the tip on a tie)
        tip, edge = ctx.low(ctx.tip_margin), ctx.low(ctx.shell_edge_margin)
        feature = SHELL_EDGE if edge < tip else TIP
        if port.plug_inclination_deg is None:
            ctx.assume(_INCLINATION_NOT_GIVEN)
        ctx.assume(_FLAT_CROWN)
        ctx.analysis["piston"] = {"governing_feature": feature, "tip_margin": (tip, LENGTH),
                                  "shell_edge_margin": (edge, LENGTH),
                                  "shell_edge_offset": (ctx.shell_edge_offset, LENGTH),
                                  "plug_inclination": (port.plug_inclination_deg or 0.0, "angle"),
                                  **(ctx.piston_allowance_values or {})}
    _clearance_check(ctx, _PISTON, port.seat_to_piston, port.piston_clearance, feature)


_INCLINATION_NOT_GIVEN = ("piston: plug_inclination not given: 0 deg assumed (plug axis parallel to the cylinder "
                          "axis), so the shell's edge is no nearer the crown than its axis")
_FLAT_CROWN = ("piston: the crown is taken as flat and square to the cylinder axis; a domed or valve-relieved crown "
               "needs its own measurement")


def check_valve(ctx: FitContext) -> None:
    port = ctx.port
    _clearance_check(ctx, _VALVE, port.seat_to_valve, port.valve_clearance)


def check_tool_clearance(ctx: FitContext) -> None:
    """Does the socket for the plug's hex pass the head's plug well? The socket follows the
    hex's form in the catalogue: a twelve-point (bi-hex) socket is slimmer than a six-point one."""
    hex_mm, well_bore = ctx.plug.hex, ctx.port.well_bore
    if hex_mm is None or well_bore is None:
        ctx.skip(_TOOL_CLEARANCE_NOT_GIVEN)
        return
    size = ctx.catalog.hex_size(hex_mm)
    if size is None:
        ctx.not_checked("tool_clearance", "the catalogue has no socket size for this hex")
        return
    if size.socket_od_mm > well_bore + EPSILON_MM:
        ctx.add("TOOL_CLEARANCE", "tool_clearance", "fail",
                f"A thin-wall {size.form} socket for the {{hex}} hex is about {{socket_od}} across, wider than "
                "the plug well's {well_bore} bore by {interference}: the plug cannot be fitted "
                "or removed with a socket.",
                hex=(hex_mm, LENGTH), socket_od=(size.socket_od_mm, LENGTH),
                well_bore=(well_bore, LENGTH), interference=(size.socket_od_mm - well_bore, LENGTH))
    elif size.form == "twelve-point":
        # The catalogue's form is the usual one for this size; a six-point hex of the same
        # size needs a socket wider by the difference of the two across-corners (same wall).
        six_point_od = size.socket_od_mm + size.across_flats_mm * (1.0 / _COS_30 - 1.0 / _COS_15)
        if six_point_od > well_bore + EPSILON_MM:
            ctx.assume(f"tool clearance: the {size.label} hex is taken as twelve-point, as the catalogue gives "
                       f"it; a six-point {size.label} hex needs a socket about {six_point_od:.1f} mm across, "
                       "wider than this well: check the plug's hex form")


_COS_30, _COS_15 = math.cos(math.radians(30.0)), math.cos(math.radians(15.0))


def _hex_family(ctx: FitContext, hex_mm: float) -> str:
    size = ctx.catalog.hex_size(hex_mm)
    return size.family if size is not None else f"{hex_mm:g} mm"


def check_hex(ctx: FitContext) -> None:
    plug_hex, tooling_hex = ctx.plug.hex, ctx.port.hex
    if plug_hex is None or tooling_hex is None:
        ctx.skip(_HEX_NOT_GIVEN)
        return
    plug_family, tooling_family = _hex_family(ctx, plug_hex), _hex_family(ctx, tooling_hex)
    if plug_family != tooling_family:
        ctx.add("HEX_DIFFERS", "hex", "info",
                f"The plug's hex ({plug_family}) is of another size than the head's tooling "
                f"({tooling_family}): have the matching socket at hand.",
                plug_hex=(plug_hex, LENGTH), tooling_hex=(tooling_hex, LENGTH))


def check_resistor(ctx: FitContext) -> None:
    required, resistor = ctx.port.resistor_required, ctx.plug.resistor
    if required is None:
        ctx.skip(_RESISTOR_UNKNOWN)
    elif required and resistor is None:
        ctx.skip(_RESISTOR_NOT_SAID)
    elif required and not resistor:
        ctx.add("RESISTOR_REQUIRED", "resistor", "warn",
                "The head calls for a resistor plug and this plug has none: expect radio "
                "interference and possible misreading by the engine's electronics.")


def check_torque(ctx: FitContext) -> None:
    """Is the planned torque inside the recommended range for this port and lubrication?
    The range, its lowering for a lubricant and the comparison: `torque.py`."""
    port = ctx.port
    material = port.material
    if material is None:
        material = "aluminium"
        ctx.assume("head material not given: the aluminium torque range (the lower) is used")
    guide = ctx.catalog.torque_for(port.thread, port.seat, material)
    if guide is None:
        ctx.not_checked("torque", f"the catalogue has no torque guidance for {port.thread} "
                                  f"{port.seat} seat in {material.replace('_', ' ')}")
        return
    lubrication = ctx.options.lubrication
    if lubrication is None:
        lubrication = "dry"
        ctx.assume(_DRY_THREADS_ASSUMED)
    if lubrication == "anti_seize":
        ctx.cautions = (*ctx.cautions, ANTI_SEIZE_CAUTION)
    if material == "aluminium":
        ctx.cautions = (*ctx.cautions, ALUMINIUM_COLD_CAUTION)
    limits = torque_limits(guide)[lubrication]
    guide = ctx.torque = limits.guide
    planned = ctx.options.torque
    if planned is None:
        return
    standing = place(planned, limits)
    # The range's own values are made once per range (`torque.TorqueLimits`); a copy gets the planned torque.
    values = dict(limits.values)
    values["planned"] = (planned, TORQUE)
    values["dry_equivalent"] = (planned / limits.lubrication_ratio, TORQUE)
    ctx.analysis["torque"] = values
    if standing != WITHIN:
        ctx.add("TORQUE_OUT_OF_RANGE", "torque", "fail" if standing == FAR_ABOVE else "warn",
                _TORQUE_MESSAGES[standing, lubrication], **values)


_DRY_THREADS_ASSUMED = ("lubrication not given: the torque range for clean, dry threads is used "
                        "(give lubrication: oiled or anti_seize to have it lowered)")



def _torque_message(standing: str, lubrication: str) -> str:
    where = (f"the recommended {{min}} to {{max}} for this thread, seat and head material, with "
             f"{LUBRICATION_WORDS[lubrication]}")
    if standing == BELOW:
        return (f"The planned torque of {{planned}} is below {where}: the plug may loosen and leak, and a "
                "loose seat passes less heat to the head, so the tip runs hot.")
    if standing == ABOVE:
        return (f"The planned torque of {{planned}} is above {where}: it can stretch the plug's shell and "
                "strip the head's threads. Above {fail_above}, half again the top of the range, it fails.")
    return (f"The planned torque of {{planned}} is more than half again the top of {where} (it fails above "
            "{fail_above}): it stretches the plug's shell, which then no longer holds its seat tight, so the "
            "seal is lost (compression and hot gas leak past and the plug overheats), and it can strip the "
            "head's threads. Shell stretch is not modelled here: no published source gives a plug shell's "
            "section.")


# Every message, by (where the torque lies, lubrication); built once, not per finding.
_TORQUE_MESSAGES = {(standing, lubrication): _torque_message(standing, lubrication) + GUIDANCE
                    for standing in (BELOW, ABOVE, FAR_ABOVE) for lubrication in LUBRICATION_WORDS}


def check_thread_strength(ctx: FitContext) -> None:
    """Will the head's thread hold? Preload plus gas load against the port thread's shear
    strength over the worst-case engaged length (model and sources: `strength.py`)."""
    plug, port, options = ctx.plug, ctx.port, ctx.options
    size = ctx.catalog.threads.get(port.thread)
    plug_class = _LOOSER_PLUG_CLASS if size is None else size.plug_thread_class
    thread = _port_thread(port.thread, plug_class)
    if thread is None:
        ctx.skip(_THREAD_STRENGTH_NO_PITCH)
        return
    if size is None:
        ctx.assume(_LOOSER_CLASS_ASSUMED)
    if "protrusion_short_side" not in ctx.geometry:  # there is a thread end and a port depth
        ctx.not_checked("thread_strength", _missing_for_thread_end(ctx, need_port=True))
        return
    material = port.material or "aluminium"
    torque = options.torque
    if torque is None:
        guide = ctx.catalog.torque_for(port.thread, port.seat, material)
        if guide is None:
            ctx.not_checked("thread_strength", "no planned torque given and the catalogue has no torque "
                                               f"guidance for {port.thread} {port.seat} seat")
            return
        torque = torque_limits(guide)[options.lubrication or "dry"].guide.max_nm
        ctx.assume("thread strength: no planned torque: the top of the recommended range (for the stated "
                   "lubrication) is used")
    if port.material is None:
        ctx.assume("thread strength: head material not given: aluminium (the weaker) is assumed")
    if options.lubrication is None:
        ctx.assume("thread strength: lubrication not given: the nut factor for 'not stated', 0.20 "
                   "(Shigley table 8-15), is used")
    if port.peak_pressure_bar is None:
        ctx.assume("thread strength: peak_pressure not given: the gas load is left out")
    diameter, pitch, limits, allowances, area_source = thread
    hot_shear_strength, strength_values, shear_strength_grade = _HEAD_MATERIALS[material]
    # Worst-case ends of the stand-off and the port depth, as `Stack.bounds` computes them.
    gasket, depth = ctx.gasket, ctx.port_depth
    # A thread protrusion exists, so the plug has a reach and the port a depth.
    assert plug.reach is not None and gasket is not None and depth is not None
    depth_min = depth.nominal - depth.down
    insert = port.insert
    if insert is not None:
        if insert.length is None:
            ctx.not_checked("thread_strength", "the thread insert's length not given")
            return
        # The plug's thread engages the insert, which ends at its own length.
        depth_min = insert.length.nominal - insert.length.minus
    engaged = engaged_length_mm(reach_min_mm=plug.reach.nominal - plug.reach.minus,
                                standoff_min_mm=gasket.nominal - gasket.down,
                                standoff_max_mm=gasket.nominal + gasket.up,
                                port_depth_min_mm=depth_min,
                                allowances=allowances)
    result = thread_strength(
        torque_nm=torque, lubrication=options.lubrication, seat=port.seat, nominal_diameter_mm=diameter,
        pitch_mm=pitch, external_major_min_mm=limits.external_major_min_mm,
        internal_pitch_max_mm=limits.internal_pitch_max_mm, engaged_length_mm=engaged,
        shear_strength_mpa=hot_shear_strength, peak_pressure_bar=port.peak_pressure_bar)
    interface = None
    if insert is not None:
        governing = _insert_strength(ctx, insert, diameter, pitch, limits, depth_min, depth.nominal - depth.down,
                                     engaged, torque)
        if governing is None:
            return
        result, strength_values, shear_strength_grade, area_source, interface = governing
    (torque_nm, nut_factor, preload, gas_load, engaged_length, shear_area, shear_strength, strip_strength,
     safety_factor, min_safety_factor) = result  # one unpacking instead of eleven field reads
    if not math.isfinite(safety_factor):  # a planned torque of (nearly) zero and no gas load
        ctx.not_checked("thread_strength", "the planned torque puts practically no load on the thread")
        return
    values: dict[str, Value | SourcedValue] = {
        "torque": (torque_nm, TORQUE), "nut_factor": (nut_factor, "ratio"),
        "preload": (preload, "force"), "gas_load": (gas_load, "force"), "load": (preload + gas_load, "force"),
        "engaged_length": (engaged_length, LENGTH), "shear_area": (shear_area, "area", "derived", area_source),
        **strength_values, "shear_strength": (shear_strength, "stress", *shear_strength_grade),
        "strip_strength": (strip_strength, "force"), "safety_factor": (safety_factor, "ratio"),
        "min_safety_factor": (min_safety_factor, "ratio")}
    analysis: dict[str, Value | SourcedValue | str] = dict(values)
    if interface is not None:
        analysis["governing_interface"] = interface[0]
        analysis.update(interface[1])
    ctx.analysis["thread_strength"] = analysis
    if safety_factor < min_safety_factor:  # ThreadStrength.at_risk
        ctx.add("THREAD_STRIP_RISK", "thread_strength", "warn",
                _STRIP_MESSAGES[None if interface is None else interface[0]], **values)


_STRIP_LOAD = ("over {engaged_length} of engaged thread (worst case) against {load} ({preload} preload at {torque} "
               "plus {gas_load} gas load): a safety factor of {safety_factor}, below {min_safety_factor}. It may "
               "strip: ")
_STRIP_MESSAGES = {
    None: ("The head's thread is estimated to hold {strip_strength} " + _STRIP_LOAD + "prefer a plug whose reach "
           "fills the port, a torque at the low end of the guidance, or a thread insert." + GUIDANCE),
    "insert_in_head": ("The thread insert's outer thread is estimated to hold {strip_strength} in the head "
                       + _STRIP_LOAD + "the insert can pull out of the head. Prefer a torque at the low end of the "
                       "guidance, or a longer insert or one with a larger outer thread." + GUIDANCE),
    "plug_in_insert": ("The plug's thread in the insert is estimated to hold {strip_strength} " + _STRIP_LOAD
                       + "prefer a plug whose reach fills the insert, or a torque at the low end of the guidance."
                       + GUIDANCE),
}

_Governing = tuple[ThreadStrength, dict[str, Value | SourcedValue], tuple[str, str], str,
                   tuple[str, dict[str, Value | SourcedValue | str]]]


def _insert_strength(ctx: FitContext, insert: Insert, diameter: float, pitch: float, limits: ThreadLimits,
                     insert_end_min: float, depth_min: float, engaged: float, torque: float) -> _Governing | None:
    """The weaker of the two interfaces of an insert: the plug's thread in the insert (the
    insert's material) and the insert's outer thread in the head (the head's material, over
    the insert's length inside the head). None when it cannot be told (reported)."""
    port, options = ctx.port, ctx.options
    if insert.kind == SOLID:
        outer = parse_designation(insert.outer_thread) if insert.outer_thread is not None else None
        if outer is None or outer[1] is None:
            ctx.not_checked("thread_strength", "the solid insert's outer_thread (with its pitch) not given")
            return None
        outer_diameter, outer_pitch = outer[0], outer[1]
        outer_name, outer_source = format_designation(outer_diameter, outer_pitch), "the insert's outer_thread"
    else:
        outer_diameter, outer_pitch, outer_name = coil_outer_thread(diameter, pitch)
        outer_source = COIL_TAP_SOURCE
        ctx.assume(f"thread strength: the coil insert sits in a tapped thread of {outer_name} ({outer_source})")
    material = insert.material
    if material is None:
        material = DEFAULT_MATERIAL[insert.kind]
        ctx.assume(_INSERT_MATERIAL_ASSUMED[insert.kind])
    insert_material = _INSERT_MATERIALS[material]
    plug_side = thread_strength(
        torque_nm=torque, lubrication=options.lubrication, seat=port.seat, nominal_diameter_mm=diameter,
        pitch_mm=pitch, external_major_min_mm=limits.external_major_min_mm,
        internal_pitch_max_mm=limits.internal_pitch_max_mm, engaged_length_mm=engaged,
        shear_strength_mpa=insert_material.hot_shear_strength_mpa, peak_pressure_bar=port.peak_pressure_bar)
    # The insert's outer thread is taken at 6g in a 6H tapped hole (ISO 965-1 by formula; an
    # approximation for a coil's wire, from memory). It bears in the head from the lead chamfer
    # to the insert's end or the chamber, whichever comes first, less one incomplete thread.
    outer_limits = port_thread_limits(outer_diameter, outer_pitch, "6g")
    in_head = max(0.0, min(insert_end_min, depth_min) - 2.0 * outer_pitch)
    head_material = ctx.port.material or "aluminium"
    head_strength, head_values, head_grade = _HEAD_MATERIALS[head_material]
    # The load is the plug's (its diameter); the shear area is the outer thread's (its pitch).
    head_side = thread_strength(
        torque_nm=torque, lubrication=options.lubrication, seat=port.seat, nominal_diameter_mm=diameter,
        pitch_mm=outer_pitch, external_major_min_mm=outer_limits.external_major_min_mm,
        internal_pitch_max_mm=outer_limits.internal_pitch_max_mm, engaged_length_mm=in_head,
        shear_strength_mpa=head_strength, peak_pressure_bar=port.peak_pressure_bar)
    other: dict[str, Value | SourcedValue | str] = {
        "insert_in_head_strip_strength": (head_side.strip_strength_n, "force"),
        "insert_in_head_engaged_length": (in_head, LENGTH),
        "plug_in_insert_strip_strength": (plug_side.strip_strength_n, "force"),
        "plug_in_insert_engaged_length": (engaged, LENGTH),
        "insert_outer_diameter": (outer_diameter, LENGTH, "from memory" if insert.kind != SOLID else "derived",
                                  outer_source)}
    if head_side.strip_strength_n < plug_side.strip_strength_n:
        source = (f"FED-STD-H28/2B appendix and Machinery's Handbook, 29th ed. (published formula), the insert's "
                  f"outer thread {outer_name} at ISO 965-1 6g in a 6H tapped hole (an approximation for a coil)")
        return head_side, head_values, head_grade, source, ("insert_in_head", other)
    insert_values, insert_grade = _INSERT_VALUES[material]
    source = "FED-STD-H28/2B appendix and Machinery's Handbook, 29th ed. (published formula), the port's thread " \
             "formed by the insert"
    return plug_side, insert_values, insert_grade, source, ("plug_in_insert", other)


_PortThread = tuple[float, float, ThreadLimits, EngagementAllowances, str]
_LOOSER_PLUG_CLASS = "6e"
_LOOSER_CLASS_ASSUMED = ("thread strength: the catalogue does not list this thread: the plug's thread is taken "
                         "as class 6e, the looser class (ISO 965-1), which gives the smaller shear area")


@lru_cache(maxsize=256)
def _port_thread(designation: str, plug_class: str) -> _PortThread | None:
    """Diameter, pitch, ISO 965-1 limits (the plug's class in a 6H port), engagement
    allowances and the shear area's source, or None for an unreadable or bare designation.
    One cached look-up per fit instead of four: build lists and fitting-plugs searches
    repeat a handful of thread sizes."""
    size = parse_designation(designation)
    if size is None or size[1] is None:
        return None
    diameter, pitch = size
    assert pitch is not None
    limits = port_thread_limits(diameter, pitch, plug_class)
    source = (f"FED-STD-H28/2B appendix and Machinery's Handbook, 29th ed. (published formula), with the "
              f"ISO 965-1 limits of a {plug_class} plug thread (d min {limits.external_major_min_mm:.3f} mm) "
              f"in a 6H port (D2 max {limits.internal_pitch_max_mm:.3f} mm)")
    return diameter, pitch, limits, EngagementAllowances.common_practice(pitch), source


class _HeadMaterial(NamedTuple):
    """A head material's strengths as the stripping check uses them, made once at import:
    the derated strength, and the analysis values with their grades and sources."""

    hot_shear_strength_mpa: float
    values: dict[str, Value | SourcedValue]  # the room-temperature minimum and the derating
    shear_strength_grade: tuple[str, str]  # grade and source of the derated strength


_HEAD_MATERIALS = {
    name: _HeadMaterial(
        strength.hot_shear_strength_mpa,
        {"room_temperature_shear_strength": (strength.shear_strength_mpa, "stress", strength.grade, strength.source),
         "hot_boss_derating": (strength.hot_derating, "ratio", strength.hot_derating_grade,
                               strength.hot_derating_source)},
        (least_sure(strength.grade, strength.hot_derating_grade),
         (f"the minimum at room temperature ({strength.shear_strength_mpa:.1f} MPa) x the hot-boss derating "
         f"({strength.hot_derating:g})")))
    for name, strength in HEAD_MATERIAL_SHEAR_STRENGTH.items()}


_INSERT_MATERIALS = INSERT_MATERIAL_SHEAR_STRENGTH
_INSERT_MATERIAL_ASSUMED = {
    kind: (f"thread strength: the insert's material not given: {DEFAULT_MATERIAL[kind].replace('_', ' ')} is "
           f"assumed ({why})")
    for kind, why in ((COIL, "coil inserts are wound from stainless wire, common practice, from memory"),
                      (SOLID, "the weaker steel listed"))}
_INSERT_VALUES: dict[str, tuple[dict[str, Value | SourcedValue], tuple[str, str]]] = {
    name: ({"room_temperature_shear_strength": (strength.shear_strength_mpa, "stress", strength.grade,
                                                strength.source),
            "hot_boss_derating": (strength.hot_derating, "ratio", strength.hot_derating_grade,
                                  strength.hot_derating_source)},
           (least_sure(strength.grade, strength.hot_derating_grade),
            f"the insert's minimum ({strength.shear_strength_mpa:.1f} MPa) x the derating ({strength.hot_derating:g})"))
    for name, strength in INSERT_MATERIAL_SHEAR_STRENGTH.items()}


def check_gap_voltage(ctx: FitContext) -> None:
    """Does the ignition have voltage to spare for this gap? Breakdown estimate from the
    charge density at the spark (model and sources: `spark.py`)."""
    plug, port = ctx.plug, ctx.port
    gap = ctx.options.gap if ctx.options.gap is not None else plug.gap
    if gap is None or port.compression_ratio is None or port.ignition_voltage_kv is None:
        ctx.skip(_GAP_VOLTAGE_NOT_GIVEN[gap is None, port.compression_ratio is None, port.ignition_voltage_kv is None])
        return
    if gap <= 0.0:
        ctx.not_checked("gap_voltage", "a gap of zero has nothing to break down")
        return
    if port.stroke_mm is not None and port.rod_length_mm is not None and port.rod_length_mm <= port.stroke_mm / 2:
        ctx.not_checked("gap_voltage", "the rod_length must be longer than half the stroke")
        return
    pressure, temperature = port.intake_pressure_bar, port.intake_temperature_k
    if pressure is None and port.boost_pressure_bar is not None:
        pressure = STANDARD_INTAKE_PRESSURE_BAR + port.boost_pressure_bar
        ctx.assume(_BOOST_READ_AS_GAUGE)
    elif pressure is None:
        if port.forced_induction:
            ctx.skip(_BOOSTED_WITHOUT_PRESSURE)
            return
        pressure = STANDARD_INTAKE_PRESSURE_BAR
        ctx.assume(_UNBOOSTED_ASSUMED[port.forced_induction is None])
    if temperature is None:
        temperature = STANDARD_INTAKE_TEMPERATURE_K
        ctx.assume("gap voltage: intake_temperature not given: 15 °C (ISO 2533 sea level)")
    advance = port.spark_advance_deg
    if advance is None:
        advance = TYPICAL_FULL_LOAD_SPARK_ADVANCE_DEG
        ctx.assume(_TYPICAL_TIMING_ASSUMED)
    if port.stroke_mm is not None and port.rod_length_mm is not None:
        rod_ratio = rod_ratio_of(port.stroke_mm, port.rod_length_mm)
    else:
        rod_ratio = TYPICAL_ROD_RATIO
        if advance:
            ctx.assume(_TYPICAL_ROD_RATIO_ASSUMED)
    estimate = estimate_spark(gap_mm=gap, available_kv=port.ignition_voltage_kv,
                              compression_ratio=port.compression_ratio, intake_pressure_bar=pressure,
                              intake_temperature_k=temperature, spark_advance_deg=advance, rod_ratio=rod_ratio)
    values: dict[str, Value | SourcedValue] = {
        "gap": (gap, LENGTH), "intake_pressure": (pressure, "pressure"), "spark_advance": (advance, "angle"),
        "density_ratio": (estimate.density_ratio, "ratio"),
        "equivalent_pressure": (estimate.equivalent_pressure_bar, "pressure"),
        "demand": (estimate.demand_kv, "voltage"),
        "demand_at_tdc": (estimate.demand_at_tdc_kv, "voltage", *_UPPER_BOUND),
        "available": (estimate.available_kv, "voltage"),
        "reserve": (estimate.available_kv - estimate.usable_kv, "voltage"),
        "usable": (estimate.usable_kv, "voltage"), "largest_gap": (estimate.largest_gap_mm, LENGTH)}
    ctx.analysis["gap_voltage"] = values
    if estimate.short_of_reserve:
        ctx.add("GAP_VOLTAGE_MARGIN", "gap_voltage", "warn",
                "A {gap} gap is estimated to need {demand} to spark at {spark_advance} before top dead centre "
                "with {intake_pressure} absolute in the intake, more than the {usable} left when {reserve} of "
                "the ignition's {available} is kept in reserve: expect misfires as the electrodes wear. A gap "
                "up to about {largest_gap} keeps the reserve. This is an estimate for comparing choices, not a "
                "substitute for the engine maker's gap specification.", **values)


_BOOST_READ_AS_GAUGE = ("gap voltage: boost_pressure is gauge (above the atmosphere): the standard atmosphere, "
                        "1.01325 bar absolute (ISO 2533), is added for the absolute intake pressure")
_BOOSTED_WITHOUT_PRESSURE = skip_reason(
    "gap_voltage", "the head is boosted (forced_induction) and gives neither intake_pressure (absolute) nor "
    "boost_pressure (gauge): the charge at the spark cannot be estimated, and the atmosphere would understate it")
_UNBOOSTED_ASSUMED = {
    False: "gap voltage: intake_pressure (absolute) and boost_pressure (gauge) not given: 1.01325 bar absolute, "
           "unboosted at sea level (ISO 2533)",
    True: "gap voltage: intake_pressure (absolute), boost_pressure (gauge) and forced_induction not given: "
          "1.01325 bar absolute, unboosted at sea level (ISO 2533); a boosted engine must give its pressure",
}
_TYPICAL_TIMING_ASSUMED = (
    f"gap voltage: spark_advance not given: {TYPICAL_FULL_LOAD_SPARK_ADVANCE_DEG:g} deg before top dead centre, a "
    "typical full-load timing (20-35 deg is common, from memory); the top-dead-centre demand, the upper bound, "
    "is given beside it")
_TYPICAL_ROD_RATIO_ASSUMED = (
    f"gap voltage: stroke and rod_length not given: a rod length of {TYPICAL_ROD_RATIO:g} crank radii (Heywood, "
    "Internal Combustion Engine Fundamentals, 1988: 3 to 4 for small and medium engines; from memory)")
_UPPER_BOUND = ("derived", ("the upper bound: the same estimate with the charge at top dead centre, the densest "
                           "moment (about twice a running engine's demand)"))


def check_heat_range(ctx: FitContext) -> None:
    """Is the plug's heat range inside the head's band? Only on the same named scale:
    scales are not mapped onto each other."""
    band, rating = ctx.port.heat_range_band, ctx.plug.heat_range
    if band is None or rating is None:
        ctx.skip(_HEAT_RANGE_NOT_GIVEN[band is None, rating is None])
        return
    plug_scale, band_scale = _scale_name(rating.scale), _scale_name(band.scale)
    if plug_scale.casefold() != band_scale.casefold():
        ctx.not_checked("heat_range", f"the plug's heat range is on the '{plug_scale}' scale and the head's "
                                      f"band on the '{band_scale}' scale; different scales are not compared")
        return
    values = {"heat_range": (rating.value, "ratio"), "band_min": (band.min, "ratio"),
              "band_max": (band.max, "ratio")}
    ctx.analysis["heat_range"] = values
    below, above = band.min - rating.value, rating.value - band.max
    if below > 0.0 or above > 0.0:
        side = "below" if below > 0.0 else "above"
        ctx.add("HEAT_RANGE_OUT_OF_BAND", "heat_range", "warn",
                f"The plug's heat range {{heat_range}} lies {{distance}} {side} the head's band of "
                f"{{band_min}} to {{band_max}} on the '{band_scale}' scale: outside its band a plug runs too "
                "hot (risking pre-ignition) or too cold (fouling), depending on which way the scale counts.",
                **values, distance=(max(below, above), "ratio"))


def _scale_name(text: str) -> str:
    # Scale names are the client's text: trimmed, and without braces, which the
    # serialiser reads as placeholders.
    return text.strip().replace("{", "(").replace("}", ")")


def check_boot(ctx: FitContext) -> None:
    """Does the coil or lead boot engage the terminal? The terminal top sits at
    terminal_height + s from the seat face and must lie in the head's boot_range."""
    plug, boot = ctx.plug, ctx.port.boot_range
    if plug.terminal_height is None or boot is None or ctx.gasket is None:
        ctx.skip(_BOOT_NOT_GIVEN[plug.terminal_height is None, boot is None, ctx.gasket is None])
        return
    top = (Stack.of(plug.terminal_height) + ctx.gasket).bounds()
    lowest, highest = ctx.low(top), ctx.high(top)
    values = {"terminal_top": (top.nominal, LENGTH), "terminal_top_min": (lowest, LENGTH),
              "terminal_top_max": (highest, LENGTH), "boot_min": (boot.min, LENGTH),
              "boot_max": (boot.max, LENGTH)}
    ctx.analysis["boot"] = values
    short, tall = boot.min - lowest, highest - boot.max
    if short > EPSILON_MM and short >= tall:
        ctx.add("BOOT_ENGAGEMENT", "boot", "warn",
                "The terminal top sits {terminal_top_min} from the seat face at its lowest (worst case), "
                "{distance} short of the {boot_min} to {boot_max} where the head's coil or lead boot "
                "engages: the boot may not grip the terminal, and the spark can track or misfire.",
                **values, distance=(short, LENGTH))
    elif tall > EPSILON_MM:
        ctx.add("BOOT_ENGAGEMENT", "boot", "warn",
                "The terminal top reaches {terminal_top_max} from the seat face at its highest (worst "
                "case), {distance} beyond the {boot_min} to {boot_max} where the head's coil or lead boot "
                "engages: the boot may bottom on the terminal and not seat or seal.",
                **values, distance=(tall, LENGTH))


def check_seat_diameter(ctx: FitContext) -> None:
    """Does the seat meet the head's machining? A flat seat's gasket must bear on the spot
    face, the hex must turn in a counterbore, a conical seat must meet a taper of its own
    angle whose mouth the plug's taper covers. Rules: `seat.py` (shared with the counter)."""
    port, plug = ctx.port, ctx.plug
    spot_face, counterbore, port_angle = port.spot_face_diameter, port.counterbore_diameter, port.seat_angle_deg
    if spot_face is None and counterbore is None and port_angle is None:
        ctx.skip(_SEAT_DIAMETER_NOT_GIVEN)
        return
    missing = []
    compared = False
    if counterbore is not None:
        if plug.hex is None:
            missing.append("the plug's hex (for the counterbore)")
        else:
            compared = True
            _hex_in_counterbore(ctx, plug.hex, counterbore)
    if port.seat == "flat":
        if port_angle is not None:
            ctx.assume(_ANGLE_ON_FLAT_PORT)
        if spot_face is not None:
            gasket = plug.gasket_thickness
            if gasket is not None and gasket.nominal <= EPSILON_MM:
                missing.append("a gasket (the plug has none, GASKET_MISSING)")
            elif plug.gasket_outside_diameter is None:
                missing.append("the plug's gasket_outside_diameter (no source gives a standard one)")
            else:
                compared = True
                if gasket_overhangs(plug.gasket_outside_diameter, spot_face):
                    ctx.add("GASKET_OVERHANG", "seat_diameter", "warn", _GASKET_OVERHANG_MESSAGE,
                            gasket_outside_diameter=(plug.gasket_outside_diameter, LENGTH),
                            spot_face_diameter=(spot_face, LENGTH),
                            overhang=((plug.gasket_outside_diameter - spot_face) / 2.0, LENGTH))
    else:
        if port_angle is not None:
            compared = True
            plug_angle = plug.seat_angle_deg
            if plug_angle is None:
                plug_angle = CONICAL_SEAT_ANGLE_DEG.value
                ctx.assume(_PLUG_ANGLE_ASSUMED)
            if angles_differ(plug_angle, port_angle):
                # A fail on the plug's own angle; a warning when that angle is only the usual one.
                given = plug.seat_angle_deg is not None
                ctx.add("SEAT_ANGLE_MISMATCH", "seat_diameter", "fail" if given else "warn",
                        _SEAT_ANGLE_MESSAGES[given], plug_angle=(plug_angle, "angle"),
                        port_angle=(port_angle, "angle"), tolerance=(SEAT_ANGLE_TOLERANCE_DEG, "angle"))
        if spot_face is not None:
            if plug.seat_diameter is None:
                missing.append("the plug's seat_diameter (the largest diameter of its taper)")
            else:
                compared = True
                if taper_mouth_bare(spot_face, plug.seat_diameter):
                    ctx.add("TAPER_DIAMETER", "seat_diameter", "warn", _TAPER_DIAMETER_MESSAGE,
                            taper_mouth=(spot_face, LENGTH), seat_diameter=(plug.seat_diameter, LENGTH),
                            bare_ring=((spot_face - plug.seat_diameter) / 2.0, LENGTH))
    if missing:
        ctx.not_checked("seat_diameter", " and ".join(missing) + " not given"
                        + ("; the rest was compared" if compared else ""))


def _hex_in_counterbore(ctx: FitContext, hex_mm: float, counterbore: float) -> None:
    form, listed = hex_form(ctx.catalog, hex_mm)
    corners = across_corners(hex_mm, form)
    if not listed:
        ctx.assume(_HEX_FORM_UNLISTED)
    values: dict[str, Value | SourcedValue] = {
        "hex": (hex_mm, LENGTH), "across_corners": (corners, LENGTH), "counterbore_diameter": (counterbore, LENGTH)}
    ctx.analysis["seat_diameter"] = {**values, "hex_form": form}
    if hex_trapped(corners, counterbore):
        ctx.add("HEX_TRAPPED", "seat_diameter", "fail", _HEX_TRAPPED_MESSAGES[form],
                **values, interference=(corners - counterbore, LENGTH))
        return
    if form == TWELVE_POINT and hex_trapped(across_corners(hex_mm, SIX_POINT), counterbore):
        ctx.assume(f"seat diameter: the {hex_mm:g} mm hex is taken as twelve-point, as the catalogue gives it; a "
                   f"six-point hex of that size is {across_corners(hex_mm, SIX_POINT):.2f} mm across its corners "
                   f"and would not turn in the {counterbore:g} mm counterbore: check the plug's hex form")
    size = ctx.catalog.hex_size(hex_mm)
    if size is not None and size.socket_od_mm > counterbore + EPSILON_MM:
        ctx.assume(f"seat diameter: a thin-wall socket for the {size.label} hex is about {size.socket_od_mm:.1f} mm "
                   f"across, wider than the {counterbore:g} mm counterbore: it reaches the hex only if the hex "
                   "stands above the counterbore")


_SEAT_DIAMETER_NOT_GIVEN = skip_reason("seat_diameter", "the head gives no spot_face_diameter, "
                                                        "counterbore_diameter or seat_angle")
_ANGLE_ON_FLAT_PORT = "seat diameter: the head's seat_angle is for a conical seat and is not used on a flat one"
_PLUG_ANGLE_ASSUMED = (f"seat diameter: the plug's seat_angle not given: {CONICAL_SEAT_ANGLE_DEG.value:g} deg "
                       f"included ({CONICAL_SEAT_ANGLE_DEG.source})")
_HEX_FORM_UNLISTED = ("seat diameter: the plug's hex is not in the catalogue: it is taken as six-point, the form "
                      "with the larger corners")
_GASKET_OVERHANG_MESSAGE = (
    "The plug's gasket, {gasket_outside_diameter} across, is wider than the head's {spot_face_diameter} spot face: "
    "its outer {overhang} overhangs the machined face. The gasket seals and passes the plug's heat to the head only "
    "where it is clamped on the face, so the seal has less margin and the plug runs hotter; the overhang can crush "
    "unevenly over the face's edge. Have the spot face machined wider, or use a plug with a narrower gasket."
    + GUIDANCE)
_HEX_TRAPPED_MESSAGES = {
    form: (f"The plug's {{hex}} {form} hex is {{across_corners}} across its corners, wider than the head's "
           "{counterbore_diameter} counterbore by {interference}: the hex cannot turn in it, so the plug cannot "
           "be screwed home or removed.")
    for form in (SIX_POINT, TWELVE_POINT)}
_SEAT_ANGLE_MESSAGES = {
    given: (f"The plug's conical seat{'' if given else ' (taken as the usual angle: the plug gives none)'} is "
            "{plug_angle} included and the head's taper {port_angle}, more than {tolerance} apart: the two meet on "
            "a line instead of a band, so the seal leaks, the heat path is a ring, and the plug can loosen."
            + ("" if given else " Check the plug's taper angle.") + GUIDANCE)
    for given in (True, False)}
_TAPER_DIAMETER_MESSAGE = (
    "The head's taper opens to {taper_mouth} at the seat face, wider than the plug's taper ({seat_diameter}): a "
    "ring of {bare_ring} of the head's taper is left bare, so the plug seals on its own taper only, carbon "
    "collects in the bare ring, and the plug sits deeper than a taper that fills the head's would." + GUIDANCE)


def check_insert(ctx: FitContext) -> None:
    """A port repaired with a thread insert: name it in every result, and measure where it
    ends against the chamber (an insert longer than the port stands proud into it; a shorter
    one leaves the head's tapped threads bare between its end and the chamber). Its strength
    is `check_thread_strength`'s governing interface."""
    insert = ctx.port.insert
    if insert is None:
        return
    ctx.cautions = ctx.cautions + (INSERT_CAUTION,)
    values: dict[str, Value | SourcedValue] = {}
    if insert.length is not None:
        values["insert_length"] = (insert.length.nominal, LENGTH)
    ctx.add("INSERT_FITTED", "insert", "info", _insert_description(insert.kind, insert.length is not None,
                                                                  insert.outer_thread, insert.material), **values)
    geometry = ctx.geometry
    short_side = geometry.get("insert_protrusion_short_side")
    long_side = geometry.get("insert_protrusion_long_side")
    if short_side is None or long_side is None:
        ctx.not_checked("insert", "the insert's length not given" if insert.length is None
                        else "the port's port_depth or design_reach not given")
        return
    tolerance = ctx.flush_tolerance()
    standing = ctx.high(long_side)
    exposed = -ctx.low(short_side)
    limit, note = ctx.max_protrusion()
    fails = limit is not None and standing > limit + EPSILON_MM
    if fails or standing > tolerance + EPSILON_MM:
        if note is not None:
            ctx.assume(note)
        found: dict[str, Value | SourcedValue] = {"distance": (standing, LENGTH),
                                                  "flush_tolerance": (tolerance, LENGTH)}
        if limit is not None:
            found["limit"] = (limit, LENGTH)
        ctx.add("INSERT_PROUD", "insert", "fail" if fails else "warn", _INSERT_PROUD_MESSAGES[fails], **found)
    if exposed > tolerance + EPSILON_MM:
        ctx.add("INSERT_SHORT", "insert", "warn", _INSERT_SHORT_MESSAGE, distance=(exposed, LENGTH),
                flush_tolerance=(tolerance, LENGTH))


@lru_cache(maxsize=64)
def _insert_description(kind: str, has_length: bool, outer_thread: str | None, material: str | None) -> str:
    parts = [f"This port is repaired with a {KIND_WORDS[kind]} thread insert"]
    if has_length:
        parts.append(" {insert_length} long")
    if outer_thread is not None:
        parts.append(f", outer thread {outer_thread}")
    if material is not None:
        parts.append(f", of {material.replace('_', ' ')}")
    return ("".join(parts) + ": the plug's thread bears on the insert, and the insert on the head. The reach and "
            "strength figures count it. It must be installed to its maker's instructions." + GUIDANCE)


_INSERT_PROUD_MESSAGES = {
    fails: ("The thread insert's end stands {distance} into the chamber (long side, worst case), "
            + ("more than the {limit} allowed (max_protrusion)" if fails
               else "beyond the flush tolerance of {flush_tolerance}")
            + ": an insert longer than the port is a hot spot that can pre-ignite the charge, it carbons up, "
            "and a coil's last turn can break off into the chamber. Have it replaced by one of the port's length."
            + GUIDANCE)
    for fails in (False, True)}
_INSERT_SHORT_MESSAGE = (
    "The thread insert ends {distance} short of the chamber (short side, worst case), beyond the flush tolerance "
    "of {flush_tolerance}: between its end and the chamber the head's oversize tapped thread is bare. It carbons "
    "up, and a plug whose threads run past the insert turns there in a thread that does not hold it and can "
    "lock in the carbon." + GUIDANCE)


Check = Callable[[FitContext], None]

# Fit first (thread, seat), then geometry, then tooling and electrics, then torque.
CHECKS: tuple[Check, ...] = (
    check_thread,
    check_seat,
    check_gasket,
    check_reach,
    check_piston,
    check_valve,
    check_tool_clearance,
    check_hex,
    check_resistor,
    check_torque,
    check_thread_strength,
    check_gap_voltage,
    check_heat_range,
    check_boot,
    check_seat_diameter,
    check_insert,
)

# The checks that need the plug installed in the port (its position along the axis, the
# torque it is tightened to). A plug of another thread or seat cannot be installed, so
# for it only the others run (see `geometry.derive`, which says so in the assumptions).
NEEDS_INSTALLATION = frozenset({check_gasket, check_reach, check_piston, check_valve, check_torque,
                                check_thread_strength, check_boot, check_seat_diameter})
CHECKS_WITHOUT_INSTALLATION: tuple[Check, ...] = tuple(check for check in CHECKS if check not in NEEDS_INSTALLATION)

# The names clients use in `check` and in the `require` option: the function name
# without its prefix, so a new check cannot be forgotten here.
CHECK_NAMES: tuple[str, ...] = tuple(check.__name__.removeprefix("check_") for check in CHECKS)
