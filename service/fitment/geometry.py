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
from math import sqrt

from .catalog import ThreadSize
from .context import FitContext
from .model import Dim
from .stack import ZERO, Bounds, Stack

_new = tuple.__new__


def _standard_gasket(ctx: FitContext, thread: str, who: str) -> float | None:
    size = ctx.catalog.thread(thread)
    if size is None or size.standard_gasket_mm is None:
        return None
    ctx.assume(_gasket_note(who, size))
    return size.standard_gasket_mm


@lru_cache(maxsize=64)
def _gasket_note(who: str, size: ThreadSize) -> str:
    return (f"{who}: the standard installed gasket for {size.designation}, "
            f"{size.standard_gasket_mm:g} mm, is assumed ({size.source})")


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


def _clearance_stack(ctx: FitContext, from_seat: Dim | None, from_breakout: Dim | None) -> Stack | None:
    """Distance from the seat face to an obstacle (piston, valve) along the axis."""
    if from_seat is not None:
        return from_seat
    if from_breakout is not None and ctx.port_depth is not None:
        return ctx.port_depth + from_breakout
    return None


def derive(ctx: FitContext) -> None:
    """Fill the context's stacks and `geometry` entries from whatever inputs exist.

    Every check runs this first, so it is written for speed: a geometry entry is the
    bounds of a difference, computed in one step by `_bounds_of_difference` rather than
    by building the difference stack and then its bounds (the same arithmetic, half the
    calls)."""
    plug, port, geometry = ctx.plug, ctx.port, ctx.geometry
    gasket = ctx.gasket = _gasket(ctx)
    depth = ctx.port_depth = port.port_depth if port.port_depth is not None else _port_depth(ctx)
    if depth is not None:
        depth_long = ctx.port_depth_long = (port.port_depth_long_side
                                            if port.port_depth_long_side is not None else depth)
    reach = plug.reach
    if reach is None or gasket is None:
        return
    thread_end = ctx.thread_end = reach - gasket
    if depth is not None:
        protrusion = geometry["thread_protrusion"] = _bounds_of_difference(thread_end, depth)
        # Without a long side the recess is the same difference: share the (immutable) entry.
        geometry["thread_recess"] = (protrusion if depth_long is depth
                                     else _bounds_of_difference(thread_end, depth_long))
    if plug.firing_end is None:
        return
    tip = ctx.tip = thread_end + plug.firing_end
    geometry["tip_position"] = tip.bounds()
    # Many heads give no valve (or piston) data; skip the call for them.
    piston = (_clearance_stack(ctx, port.seat_to_piston, port.piston_clearance)
              if port.seat_to_piston is not None or port.piston_clearance is not None else None)
    valve = (_clearance_stack(ctx, port.seat_to_valve, port.valve_clearance)
             if port.seat_to_valve is not None or port.valve_clearance is not None else None)
    if piston is None and valve is None:
        return
    allowance = ctx.dynamic_allowance()
    if piston is not None:
        geometry["piston_margin"] = _margin_bounds(piston, tip, allowance)
    if valve is not None:
        geometry["valve_margin"] = _margin_bounds(valve, tip, allowance)


def _margin_bounds(obstacle: Stack, tip: Stack, allowance: float) -> Bounds:
    """`(obstacle - (tip + Stack.exact(allowance))).bounds()`: margin = obstacle - tip -
    dynamic allowance, the allowance exact. Written out with the same operations in the
    same order (the exact term's zero tolerances included, so even a signed zero comes
    out as before) because every fit with piston or valve data computes it."""
    nominal = obstacle[0] - (tip[0] + allowance)
    up, down = obstacle[1] + (tip[2] + 0.0), obstacle[2] + (tip[1] + 0.0)
    up_sq, down_sq = obstacle[3] + (tip[4] + 0.0), obstacle[4] + (tip[3] + 0.0)
    return _new(Bounds, (nominal, nominal - down, nominal + up,
                         nominal - sqrt(down_sq) if down_sq else nominal,
                         nominal + sqrt(up_sq) if up_sq else nominal))


def _bounds_of_difference(a: Stack, b: Stack) -> Bounds:
    """`(a - b).bounds()` in one call: the same operations in the same order (see
    `Stack.__sub__` and `Stack.bounds`), so the result is bit-for-bit the same."""
    nominal, up, down, up_sq, down_sq = a[0] - b[0], a[1] + b[2], a[2] + b[1], a[3] + b[4], a[4] + b[3]
    return _new(Bounds, (nominal, nominal - down, nominal + up,
                         nominal - sqrt(down_sq) if down_sq else nominal,
                         nominal + sqrt(up_sq) if up_sq else nominal))
