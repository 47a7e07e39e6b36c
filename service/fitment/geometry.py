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

from .context import FitContext
from .model import Dim
from .stack import ZERO, Bounds, Stack

_new = tuple.__new__


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
    if thickness is None:
        return None
    # D = R_d - s_std, the standard gasket exact: `design_reach - Stack.exact(thickness)`.
    reach = port.design_reach
    return _new(Stack, (reach[0] - thickness, reach[1] + 0.0, reach[2] + 0.0, reach[3] + 0.0, reach[4] + 0.0))


def _clearance_stack(ctx: FitContext, from_seat: Dim | None, from_breakout: Dim | None) -> Stack | None:
    """Distance from the seat face to an obstacle (piston, valve) along the axis."""
    obstacle = _obstacle(from_seat, from_breakout, ctx.port_depth)
    return obstacle if obstacle is None or from_seat is not None else _new(Stack, obstacle)


def _obstacle(from_seat: Dim | None, from_breakout: Dim | None, depth: Stack | None) -> tuple | None:
    """`_clearance_stack`'s terms as a plain tuple: `derive` only reads it once."""
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
    (`Stack.__sub__`, `Stack.__add__` and `Stack.bounds`, the same operations in the same
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
    # e = reach - s
    end, end_up, end_down, end_up_sq, end_down_sq = (reach[0] - gasket[0], reach[1] + gasket[2],
                                                     reach[2] + gasket[1], reach[3] + gasket[4],
                                                     reach[4] + gasket[3])
    if depth is not None:
        # Δ = e - D
        protrusion = geometry["thread_protrusion"] = _bounds(
            end - depth[0], end_up + depth[2], end_down + depth[1], end_up_sq + depth[4], end_down_sq + depth[3])
        # Δ_long = e - D_long; without a long side it is the same entry (immutable, so shared).
        geometry["thread_recess"] = protrusion if depth_long is depth else _bounds(
            end - depth_long[0], end_up + depth_long[2], end_down + depth_long[1],
            end_up_sq + depth_long[4], end_down_sq + depth_long[3])
    firing_end = plug.firing_end
    if firing_end is None:
        return
    # t = e + firing_end
    tip, tip_up, tip_down, tip_up_sq, tip_down_sq = (end + firing_end[0], end_up + firing_end[1],
                                                     end_down + firing_end[2], end_up_sq + firing_end[3],
                                                     end_down_sq + firing_end[4])
    geometry["tip_position"] = _bounds(tip, tip_up, tip_down, tip_up_sq, tip_down_sq)
    # Many heads give no valve (or piston) data; skip the call for them.
    piston = (_obstacle(port.seat_to_piston, port.piston_clearance, depth)
              if port.seat_to_piston is not None or port.piston_clearance is not None else None)
    valve = (_obstacle(port.seat_to_valve, port.valve_clearance, depth)
             if port.seat_to_valve is not None or port.valve_clearance is not None else None)
    if piston is None and valve is None:
        return
    # m = obstacle - (t + allowance), the allowance an exact term: its zero tolerances are
    # added as `Stack.__add__` would, so even a signed zero comes out as before.
    allowance = ctx.dynamic_allowance()
    reserved, reserved_up, reserved_down = tip + allowance, tip_up + 0.0, tip_down + 0.0
    reserved_up_sq, reserved_down_sq = tip_up_sq + 0.0, tip_down_sq + 0.0
    if piston is not None:
        geometry["piston_margin"] = _bounds(
            piston[0] - reserved, piston[1] + reserved_down, piston[2] + reserved_up,
            piston[3] + reserved_down_sq, piston[4] + reserved_up_sq)
    if valve is not None:
        geometry["valve_margin"] = _bounds(
            valve[0] - reserved, valve[1] + reserved_down, valve[2] + reserved_up,
            valve[3] + reserved_down_sq, valve[4] + reserved_up_sq)


def _bounds(nominal: float, up: float, down: float, up_sq: float, down_sq: float) -> Bounds:
    """`Stack(nominal, up, down, up_sq, down_sq).bounds()` without building the stack."""
    return _new(Bounds, (nominal, nominal - down, nominal + up,
                         nominal - sqrt(down_sq) if down_sq else nominal,
                         nominal + sqrt(up_sq) if up_sq else nominal))
