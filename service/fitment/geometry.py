"""The contract's geometry along the plug axis (origin at the head's seat face, positive
towards the chamber), built as tolerance stacks before any check runs.

    s      = installed gasket (flat plug; thinner when re-used) + indexing washer; 0 (conical plug)
    D      = port depth, short side; from a design reach R_d: R_d - s_std (flat port), R_d (conical)
    D_long = port depth on the long side (default D)
    e      = reach - s                          thread end
    protrusion_short_side = e - D               REACH_SHORT reads its low bound
    protrusion_long_side  = e - D_long          REACH_LONG reads its high bound
    t      = e + firing_end                     tip position
    O      = D + piston_clearance, or seat_to_piston (valve likewise)
    tip margin        = O - t - a               a: the piston's allowance: dynamic_allowance, else the
                                                running allowance from the head's max_rpm (running.py)
    shell-edge margin = O - e - r·tan θ - a     r: half the thread's major diameter,
                                                θ: the plug's inclination to the cylinder axis
    piston_margin     = the smaller of the two, bound by bound
    valve_margin      = O_valve - t - a_valve   (the tip only; a_valve: dynamic_allowance alone)

    with a thread insert of length L (from the seat face to its chamber end):
    insert_protrusion_short_side = L - D        INSERT_SHORT reads its low bound
    insert_protrusion_long_side  = L - D_long   INSERT_PROUD reads its high bound

Each line below is one of these formulas, written with the stack operators
(`stack.Stack`), so the code reads as the contract does.
"""
from __future__ import annotations

import math
from functools import lru_cache

from .context import FitContext
from .defaults import REUSED_GASKET_TURN_DEG
from .designation import parse_designation
from .model import Dim, PlugSpec, PortSpec
from .stack import ZERO, Stack, lower_of

TIP, SHELL_EDGE = "tip", "shell_edge"


def derive(ctx: FitContext) -> None:
    """Fill the context's stacks and `geometry` entries from whatever inputs exist.

    A plug of another thread or seat than the port cannot be installed in it: its
    position along the axis does not exist, so no entry about it is made (the
    assumptions say why)."""
    plug, port, geometry = ctx.plug, ctx.port, ctx.geometry
    D = ctx.port_depth = port_depth(ctx)
    D_long = ctx.port_depth_long = port.port_depth_long_side or D
    insert = port.insert
    if insert is not None and insert.length is not None and D is not None and D_long is not None:
        L = insert.length
        geometry["insert_protrusion_short_side"] = (L - D).bounds()
        geometry["insert_protrusion_long_side"] = (L - D_long).bounds()
    if not ctx.installable:
        ctx.assume(_NOT_INSTALLABLE_NOTE)
        return
    s = ctx.gasket = standoff(ctx)
    if plug.reach is None or s is None:
        return
    e = ctx.thread_end = plug.reach - s
    if D is not None and D_long is not None:
        short_side = geometry["protrusion_short_side"] = (e - D).bounds()
        # On a flat roof D_long is D: the same entry (immutable, so shared).
        geometry["protrusion_long_side"] = short_side if D_long is D else (e - D_long).bounds()
    if plug.firing_end is None:
        return
    t = ctx.tip = e + plug.firing_end
    geometry["tip_position"] = t.bounds()
    if not (port.seat_to_piston or port.piston_clearance or port.seat_to_valve or port.valve_clearance):
        return  # many heads give neither obstacle
    O_piston = obstacle_distance(ctx, port.seat_to_piston, port.piston_clearance)
    if O_piston is not None:
        a = ctx.piston_allowance()
        r_tan_theta = ctx.shell_edge_offset = shell_edge_offset(plug, port)
        tip_margin = ctx.tip_margin = (O_piston - t - a).bounds()
        edge_margin = ctx.shell_edge_margin = (O_piston - e - r_tan_theta - a).bounds()
        geometry["piston_margin"] = lower_of(tip_margin, edge_margin)
    O_valve = obstacle_distance(ctx, port.seat_to_valve, port.valve_clearance)
    if O_valve is not None:
        a_valve = ctx.valve_allowance()
        geometry["valve_margin"] = (O_valve - t - a_valve).bounds()


_NOT_INSTALLABLE_NOTE = ("the plug's thread or seat does not match the port's, so it cannot be installed there: "
                         "its position in the port (protrusion, tip, margins), the torque guidance and the checks "
                         "that depend on them (gasket, reach, piston, valve, torque, thread strength, boot) are "
                         "left out")


def port_depth(ctx: FitContext) -> Stack | None:
    """D: the port depth given, or the design reach less the standard gasket (flat port)."""
    port = ctx.port
    if port.port_depth is not None:
        return port.port_depth
    if port.design_reach is None:
        return None
    if port.seat == "conical":
        return port.design_reach
    thickness = _standard_gasket(ctx, port.thread, "port depth derived from design_reach")
    return None if thickness is None else port.design_reach - thickness


def standoff(ctx: FitContext) -> Stack | None:
    """s: how far the plug's seat stands off the head's seat face (None: not known)."""
    plug, options = ctx.plug, ctx.options
    if plug.seat == "conical":
        if options.indexing_washer:
            ctx.assume(_WASHER_ON_CONICAL_NOTE)
        return ZERO
    gasket: Stack | None = plug.gasket_thickness
    if gasket is None:
        thickness = _standard_gasket(ctx, plug.thread, "plug gasket_thickness not given")
        if thickness is None:
            return None
        gasket = Stack.exact(thickness)
    if options.gasket_condition == "reused":
        crush, note = _reuse_crush(plug.thread)
        ctx.assume(note)
        gasket = gasket - crush
    if options.indexing_washer:
        gasket = gasket + options.indexing_washer
    return gasket


_WASHER_ON_CONICAL_NOTE = ("indexing_washer left out: a conical-seat plug seals on its taper, with no gasket "
                           "and no washer")


def _standard_gasket(ctx: FitContext, thread: str, who: str) -> float | None:
    size = ctx.catalog.thread(thread)
    if size is None or size.standard_gasket_mm is None:
        return None
    ctx.assume(_gasket_note(who, size.designation, size.standard_gasket_mm, size.source))
    return size.standard_gasket_mm


@lru_cache(maxsize=64)
def _gasket_note(who: str, designation: str, thickness_mm: float, source: str) -> str:
    # Keyed by the size's fields rather than the `ThreadSize`: a frozen dataclass hashes
    # in Python code (about 0.5 µs), the strings and float here hash in C.
    return f"{who}: the standard installed gasket for {designation}, {thickness_mm:g} mm, is assumed ({source})"


@lru_cache(maxsize=64)
def _reuse_crush(thread: str) -> tuple[float, str]:
    """How much thinner a re-used gasket sits than a new one: the plug's axial travel in
    the re-used gasket's turn past finger-tight (pitch × 30/360), and the note saying so."""
    pitch = (parse_designation(thread) or (0.0, None))[1] or 0.0
    crush = pitch * REUSED_GASKET_TURN_DEG.value / 360.0
    return crush, (f"gasket_condition reused: the gasket is taken {crush:.3f} mm thinner than installed new, the "
                   f"travel of a further {REUSED_GASKET_TURN_DEG.value:g} deg turn on the {pitch:g} mm pitch "
                   f"({REUSED_GASKET_TURN_DEG.source}); tighten it by the re-used gasket's turn angle "
                   "(torque.reused_gasket_turn_angle_deg), not the new gasket's")


def obstacle_distance(ctx: FitContext, from_seat: Dim | None, from_breakout: Dim | None) -> Stack | None:
    """O: from the seat face to an obstacle (piston, valve) along the plug axis.

    Measured from the seat it is one length; from the break-out it adds the port depth,
    whose tolerance then counts once (`seat_to_piston` exists so that it need not)."""
    if from_seat is not None:
        return from_seat
    if from_breakout is None or ctx.port_depth is None:
        return None
    return ctx.port_depth + from_breakout


def shell_edge_offset(plug: PlugSpec, port: PortSpec) -> float:
    """r·tan θ: how much nearer a flat crown square to the cylinder axis is to the low edge
    of the shell's thread end than to the plug axis, measured along the plug axis."""
    theta = port.plug_inclination_deg or 0.0
    if theta == 0.0:
        return 0.0
    diameter = (parse_designation(plug.thread) or (0.0, None))[0]
    return diameter / 2.0 * math.tan(math.radians(theta))
