"""The contract's geometry along the plug axis (origin at the head's seat face, positive
towards the chamber), built as tolerance stacks before any check runs.

    s      = installed gasket (flat plug) or 0 (conical plug)
    D      = port depth, short side; from a design reach R_d: R_d - s_std (flat port), R_d (conical)
    D_long = port depth on the long side (default D)
    e      = reach - s                 thread end
    Δ      = e - D                     thread protrusion (REACH_LONG)
    Δ_long = e - D_long                thread recess (REACH_SHORT)
    t      = e + firing_end            tip position
    m_p    = D + piston_clearance - t - dynamic  (or seat_to_piston - t - dynamic)
"""
from __future__ import annotations

from functools import lru_cache

from .context import FitContext
from .model import Dim
from .stack import ZERO, Stack, bounds_of


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


def _gasket(ctx: FitContext) -> Stack | None:
    plug = ctx.plug
    if plug.seat == "conical":
        return ZERO
    if plug.gasket_thickness is not None:
        return plug.gasket_thickness
    thickness = _standard_gasket(ctx, plug.thread, "plug gasket_thickness not given")
    return None if thickness is None else Stack.exact(thickness)


def _port_depth(ctx: FitContext) -> Stack | None:
    port = ctx.port
    if port.port_depth is not None:
        return port.port_depth
    if port.design_reach is None:
        return None
    if port.seat == "conical":
        return port.design_reach
    thickness = _standard_gasket(ctx, port.thread, "port depth derived from design_reach")
    return None if thickness is None else port.design_reach - Stack.exact(thickness)


def clearance_stack(ctx: FitContext, from_seat: Dim | None, from_breakout: Dim | None) -> Stack | None:
    """Distance from the seat face to an obstacle (piston, valve) along the axis."""
    terms = _obstacle_terms(from_seat, from_breakout, ctx.port_depth)
    return terms if terms is None or terms is from_seat else Stack(*terms)


def _obstacle_terms(from_seat: Dim | None, from_breakout: Dim | None, depth: Stack | None) -> tuple[float, ...] | Dim | None:
    """`clearance_stack`'s terms, as a plain tuple when summed: `derive` reads them once,
    and a plain tuple is made and unpacked in half the time of a `Stack` (about 0.2 µs a
    fit on heads that give the clearance from the breakout)."""
    if from_seat is not None:
        return from_seat
    if from_breakout is None or depth is None:
        return None
    # D + clearance, as `Stack.__add__` sums it.
    return (depth[0] + from_breakout[0], depth[1] + from_breakout[1], depth[2] + from_breakout[2],
            depth[3] + from_breakout[3], depth[4] + from_breakout[4])


def derive(ctx: FitContext) -> None:
    """Fill the context's stacks and `geometry` entries from whatever inputs exist.

    Every fit runs this first, so the stack arithmetic is written out on local floats
    (`Stack.__sub__`, `Stack.__add__` and `bounds_of`, the same operations in the same
    order, so every bound is bit-for-bit what the operators give) rather than through
    the operators: each operator call builds a tuple subclass, and a fit used to make a
    dozen of them that nobody kept. Only the geometry entries are built; `ctx.thread_end`
    and `ctx.tip` make their stacks when read."""
    plug, port, geometry = ctx.plug, ctx.port, ctx.geometry
    gasket = ctx.gasket = _gasket(ctx)
    depth = ctx.port_depth = port.port_depth if port.port_depth is not None else _port_depth(ctx)
    if depth is not None:
        depth_long = ctx.port_depth_long = (port.port_depth_long_side
                                            if port.port_depth_long_side is not None else depth)
    reach = plug.reach
    if reach is None or gasket is None:
        return
    # Each stack unpacked once as (nominal, up, down, up², down²): cheaper than indexing it.
    r, r_up, r_down, r_up2, r_down2 = reach
    s, s_up, s_down, s_up2, s_down2 = gasket
    # e = reach - s
    e, e_up, e_down, e_up2, e_down2 = r - s, r_up + s_down, r_down + s_up, r_up2 + s_down2, r_down2 + s_up2
    if depth is not None:
        # Δ = e - D
        d, d_up, d_down, d_up2, d_down2 = depth
        protrusion = geometry["thread_protrusion"] = bounds_of(
            e - d, e_up + d_down, e_down + d_up, e_up2 + d_down2, e_down2 + d_up2)
        # Δ_long = e - D_long; without a long side it is the same entry (immutable, so shared).
        if depth_long is depth:
            geometry["thread_recess"] = protrusion
        else:
            d, d_up, d_down, d_up2, d_down2 = depth_long
            geometry["thread_recess"] = bounds_of(e - d, e_up + d_down, e_down + d_up, e_up2 + d_down2, e_down2 + d_up2)
    firing_end = plug.firing_end
    if firing_end is None:
        return
    # t = e + firing_end
    f, f_up, f_down, f_up2, f_down2 = firing_end
    t, t_up, t_down, t_up2, t_down2 = e + f, e_up + f_up, e_down + f_down, e_up2 + f_up2, e_down2 + f_down2
    geometry["tip_position"] = bounds_of(t, t_up, t_down, t_up2, t_down2)
    # Many heads give no valve (or piston) data; skip the call for them.
    piston = (_obstacle_terms(port.seat_to_piston, port.piston_clearance, depth)
              if port.seat_to_piston is not None or port.piston_clearance is not None else None)
    valve = (_obstacle_terms(port.seat_to_valve, port.valve_clearance, depth)
             if port.seat_to_valve is not None or port.valve_clearance is not None else None)
    if piston is None and valve is None:
        return
    # m = obstacle - (t + allowance), the allowance an exact term: its zero tolerances are
    # added as `Stack.__add__` would, so even a signed zero comes out as before.
    a = t + ctx.dynamic_allowance()
    a_up, a_down, a_up2, a_down2 = t_up + 0.0, t_down + 0.0, t_up2 + 0.0, t_down2 + 0.0
    if piston is not None:
        o, o_up, o_down, o_up2, o_down2 = piston
        geometry["piston_margin"] = bounds_of(o - a, o_up + a_down, o_down + a_up, o_up2 + a_down2, o_down2 + a_up2)
    if valve is not None:
        o, o_up, o_down, o_up2, o_down2 = valve
        geometry["valve_margin"] = bounds_of(o - a, o_up + a_down, o_down + a_up, o_up2 + a_down2, o_down2 + a_up2)

