"""The checks, one function each, run in the order of `CHECKS`.

A check reads the context (inputs and the geometry already derived) and reports through
`ctx.add` (a finding), `ctx.not_checked` (data missing) and `ctx.analysis`. A check that
finds nothing wrong adds nothing. Messages are templates: `{name}` is filled from the
finding's values in the client's units by the serialiser, so no number is formatted here.
To add a check: write one function here, add it to `CHECKS`, and add its code to the
README's table of finding codes.
"""
from __future__ import annotations

from typing import Callable

from .context import FitContext
from .designation import parse_designation

LENGTH = "length"
TORQUE = "torque"

# Lengths closer than a nanometre are equal: it keeps a verdict from flipping on the
# last bit of a unit conversion (0.75 in -> 19.049999999999997 mm).
EPSILON_MM = 1e-9


def check_thread(ctx: FitContext) -> None:
    plug, port = ctx.plug.thread, ctx.port.thread
    if plug == port:
        return
    plug_numbers = parse_designation(plug) or (0.0, 0.0)
    port_numbers = parse_designation(port) or (0.0, 0.0)
    differs = "diameter" if plug_numbers[0] != port_numbers[0] else "pitch"
    ctx.add("THREAD_MISMATCH", "thread", "fail",
            f"The plug's thread {plug} does not match the port's {port} (the {differs} "
            "differs): it cannot be screwed in without damaging the head's threads.",
            plug_diameter=(plug_numbers[0], LENGTH), plug_pitch=(plug_numbers[1] or 0.0, LENGTH),
            port_diameter=(port_numbers[0], LENGTH), port_pitch=(port_numbers[1] or 0.0, LENGTH))


def check_seat(ctx: FitContext) -> None:
    plug, port = ctx.plug.seat, ctx.port.seat
    if plug == port:
        return
    if plug == "conical":
        why = ("a conical-seat plug in a flat-seat port has no gasket face to seal on: "
               "the seal leaks and the plug can loosen")
    else:
        why = ("a flat-seat plug in a conical-seat port seals on the edge of its gasket "
               "against the taper: the seal leaks and the reach is wrong")
    ctx.add("SEAT_MISMATCH", "seat", "fail", f"Seat mismatch: {why}.")


def check_reach(ctx: FitContext) -> None:
    geometry = ctx.geometry
    protrusion = geometry.get("thread_protrusion")
    if protrusion is None:
        ctx.not_checked("reach", _missing_for_thread_end(ctx, need_port=True))
        return
    recess = geometry["thread_recess"]
    tolerance = ctx.flush_tolerance()
    worst_protrusion = ctx.high(protrusion)
    if worst_protrusion > tolerance + EPSILON_MM:
        ctx.add("REACH_LONG", "reach", "warn",
                "The plug's threads stand {thread_protrusion} into the chamber (worst case), "
                "beyond the flush tolerance of {flush_tolerance}: exposed threads carbon up "
                "and can seize in the head. A plug about {thread_protrusion} shorter in reach "
                "fits flush.",
                thread_protrusion=(worst_protrusion, LENGTH), flush_tolerance=(tolerance, LENGTH))
    worst_recess = ctx.low(recess)
    if worst_recess < -tolerance - EPSILON_MM:
        ctx.add("REACH_SHORT", "reach", "warn",
                "The plug's thread end stops {shortfall} short of the chamber (long side, "
                "worst case), beyond the flush tolerance of {flush_tolerance}: the head's "
                "threads are left exposed to carbon and the spark is shrouded. A plug about "
                "{shortfall} longer in reach fits flush.",
                shortfall=(-worst_recess, LENGTH), flush_tolerance=(tolerance, LENGTH))


def _missing_for_thread_end(ctx: FitContext, need_port: bool) -> str:
    missing = []
    if ctx.plug.reach is None:
        missing.append("the plug's reach")
    if ctx.gasket is None:
        missing.append(f"the plug's gasket thickness (no standard gasket for {ctx.plug.thread})")
    if need_port and ctx.port_depth is None:
        missing.append("the port's port_depth or design_reach")
    return " and ".join(missing) + " not given" if missing else "inputs incomplete"


def _clearance_check(ctx: FitContext, check: str, code: str, entry_name: str, obstacle: str,
                     from_seat: object, from_breakout: object, seat_field: str, breakout_field: str) -> None:
    margin = ctx.geometry.get(entry_name)
    if margin is None:
        if from_seat is None and from_breakout is None:
            ctx.not_checked(check, f"the head gives neither {breakout_field} nor {seat_field}")
        elif ctx.tip is None:
            missing = "the plug's firing_end not given" if ctx.plug.firing_end is None and ctx.thread_end is not None \
                else _missing_for_thread_end(ctx, need_port=False)
            ctx.not_checked(check, missing)
        else:
            ctx.not_checked(check, f"{breakout_field} needs the port's port_depth or design_reach")
        return
    minimum = ctx.min_clearance()
    worst = ctx.low(margin)
    if worst >= minimum - EPSILON_MM:
        return
    template = _CONTACT_MESSAGES[obstacle][worst < 0]
    ctx.add(code, check, "fail", template,
            margin=(worst, LENGTH), overlap=(max(0.0, -worst), LENGTH),
            min_clearance=(minimum, LENGTH), shortfall=(minimum - worst, LENGTH))


def _contact_messages(obstacle: str) -> tuple[str, str]:
    """(too close, interfering) message templates for one obstacle."""
    return (
        f"At its closest the {obstacle} comes within {{margin}} of the electrode (worst case), "
        "less than the minimum clearance of {min_clearance} by {shortfall}: it can strike the plug.",
        f"The electrode would meet the {obstacle}: at its closest it reaches {{overlap}} past the "
        f"{obstacle} (worst case). It needs {{shortfall}} more room to keep the minimum clearance "
        "of {min_clearance}.")


_PISTON = "piston crown at top dead centre"
_VALVE = "valve"
_CONTACT_MESSAGES = {obstacle: _contact_messages(obstacle) for obstacle in (_PISTON, _VALVE)}


def check_piston(ctx: FitContext) -> None:
    port = ctx.port
    _clearance_check(ctx, "piston", "PISTON_CONTACT", "piston_margin", _PISTON,
                     port.seat_to_piston, port.piston_clearance, "seat_to_piston", "piston_clearance")


def check_valve(ctx: FitContext) -> None:
    port = ctx.port
    _clearance_check(ctx, "valve", "VALVE_CONTACT", "valve_margin", _VALVE,
                     port.seat_to_valve, port.valve_clearance, "seat_to_valve", "valve_clearance")


def check_tool_clearance(ctx: FitContext) -> None:
    hex_mm, well_bore = ctx.plug.hex, ctx.port.well_bore
    if hex_mm is None or well_bore is None:
        ctx.not_checked("tool_clearance", "needs the plug's hex and the head's well_bore")
        return
    size = ctx.catalog.hex_size(hex_mm)
    if size is None:
        ctx.not_checked("tool_clearance", "the catalogue has no socket size for this hex")
        return
    if size.socket_od_mm > well_bore + EPSILON_MM:
        ctx.add("TOOL_CLEARANCE", "tool_clearance", "fail",
                "A thin-wall socket for the {hex} hex is about {socket_od} across, wider than "
                "the plug well's {well_bore} bore by {interference}: the plug cannot be fitted "
                "or removed with a socket.",
                hex=(hex_mm, LENGTH), socket_od=(size.socket_od_mm, LENGTH),
                well_bore=(well_bore, LENGTH), interference=(size.socket_od_mm - well_bore, LENGTH))


def _hex_family(ctx: FitContext, hex_mm: float) -> str:
    size = ctx.catalog.hex_size(hex_mm)
    return size.family if size is not None else f"{hex_mm:g} mm"


def check_hex(ctx: FitContext) -> None:
    plug_hex, tooling_hex = ctx.plug.hex, ctx.port.hex
    if plug_hex is None or tooling_hex is None:
        ctx.not_checked("hex", "needs the plug's hex and the hex the head's tooling is made for")
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
        ctx.not_checked("resistor", "the head does not say whether a resistor plug is required")
    elif required and resistor is None:
        ctx.not_checked("resistor", "the head requires a resistor plug and the plug does not say if it has one")
    elif required and not resistor:
        ctx.add("RESISTOR_REQUIRED", "resistor", "warn",
                "The head calls for a resistor plug and this plug has none: expect radio "
                "interference and possible misreading by the engine's electronics.")


def check_torque(ctx: FitContext) -> None:
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
    ctx.torque = guide
    if ctx.options.lubrication not in (None, "dry"):
        ctx.assume("the torque guidance is for clean, dry threads; lubricated threads reach a "
                   "higher preload at the same torque")
    planned = ctx.options.torque
    if planned is not None and not (guide.min_nm - 1e-9 <= planned <= guide.max_nm + 1e-9):
        side = "below" if planned < guide.min_nm else "above"
        ctx.add("TORQUE_OUT_OF_RANGE", "torque", "warn",
                f"The planned torque of {{planned}} is {side} the recommended {{min}} to {{max}} "
                "for this thread, seat and head material" +
                (": the plug may loosen or leak." if side == "below" else
                 ": it can stretch the shell or strip the head's threads."),
                planned=(planned, TORQUE), min=(guide.min_nm, TORQUE), max=(guide.max_nm, TORQUE))


Check = Callable[[FitContext], None]

# Fit first (thread, seat), then geometry, then tooling and electrics, then torque.
CHECKS: tuple[Check, ...] = (
    check_thread,
    check_seat,
    check_reach,
    check_piston,
    check_valve,
    check_tool_clearance,
    check_hex,
    check_resistor,
    check_torque,
)

# The names clients use in `check` and in the `require` option: the function name
# without its prefix, so a new check cannot be forgotten here.
CHECK_NAMES: tuple[str, ...] = tuple(check.__name__.removeprefix("check_") for check in CHECKS)
