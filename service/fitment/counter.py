"""The parts counter's questions, answered without running the engine on every plug.

"Which of 100,000 plugs fit this head?" must answer in milliseconds. The database groups
the head's candidates by design (every column the engine reads), so the engine runs at
most once per design; this module derives, from the head alone, the few numbers that
decide which designs need the engine at all, states that rule on one plug (`classify`)
so tests can prove it against the engine itself, and gives the ranking key.

Only the contract's geometry is used (fit-check contract, "Geometry"):

    s = installed gasket (flat: the plug's, else the catalogue's standard; conical: 0)
    e = reach - s                       thread end
    t = e + firing_end                  tip position
    margin = obstacle - t - allowance   (piston, valve)

and three facts about bounds: a worst-case or RSS low bound is never above the nominal,
a high bound never below it, and a worst-case bound is never inside the RSS one.

- A plug certainly FAILS the piston or valve check when its nominal tip is beyond
  `tip_fail_above`: even its nominal margin is under the minimum clearance.
- A plug certainly does NOT FAIL them when its worst-case tip (`t` nominal plus the
  tolerances that move it inwards) is within `tip_safe_upto`.
- A plug can be a clean pass only if its nominal thread end lies in `pass_window`:
  outside it the nominal protrusion already exceeds the flush tolerance on one side,
  so REACH_LONG or REACH_SHORT is certain (as is RESISTOR_REQUIRED for a plug without
  a resistor in a head that requires one).
- Tool clearance fails for a catalogue hex whose socket does not pass the well bore.

Failures come only from THREAD/SEAT (left out by the query), PISTON, VALVE and TOOL
CLEARANCE: the deeper checks only warn, and the counter offers no `require` option. So
a design certain to warn and certain not to fail is counted and ranked without the
engine, and checked only if it lands on the requested page; every plug that is listed
has been checked by the engine.
"""
from __future__ import annotations

from dataclasses import dataclass

from .catalog import Catalog
from .context import FitContext
from .geometry import clearance_stack, derive
from .model import FitResult, Options, PlugSpec, PortSpec

# Slack on every comparison of the bounds, in mm: far above float rounding (1e-12 mm),
# far below anything a gauge reads (1 µm), so a plug exactly on a limit is left to the
# engine rather than decided by the last bit of a float.
SLACK_MM = 1e-6
# Ranking keys are rounded to a nanometre, so two plugs whose keys are equal in exact
# arithmetic but differ in the last bit of a float tie, and then rank by sku.
KEY_DIGITS = 9

PASS, WARN, FAIL = "pass", "warn", "fail"
GROUP = {PASS: 0, WARN: 1}


@dataclass(frozen=True, slots=True)
class FitBounds:
    """What the head says about every plug of its thread and seat (mm)."""

    conical: bool
    # The installed gasket the engine assumes for a flat plug that gives none (None: the
    # catalogue has no standard for this thread, so such a plug's thread end is unknown).
    standard_gasket: float | None
    port_depth: float | None          # D, nominal: the ranking's flush reference
    pass_window: tuple[float, float] | None  # thread-end range a clean pass needs; None: no reach check
    tip_fail_above: float | None      # None: no piston or valve data
    tip_safe_upto: float | None
    piston_low: float | None          # worst-case seat-to-piston less the allowance, for the margin key
    failing_hexes: tuple[float, ...]  # catalogue hexes whose socket does not pass the well bore
    passing_hexes: tuple[float, ...]
    hex_checked: bool                 # the head gives a well bore
    resistor_required: bool


def fit_bounds(port: PortSpec, options: Options, catalog: Catalog) -> FitBounds:
    """The bounds for `port`, computed with the engine's own stacks and defaults."""
    ctx = FitContext(PlugSpec(port.thread, port.seat), port, options, catalog)
    derive(ctx)
    size = catalog.thread(port.thread)
    conical = port.seat == "conical"
    standard = 0.0 if conical else (size.standard_gasket_mm if size is not None else None)
    allowance = ctx.dynamic_allowance()
    minimum = ctx.min_clearance()
    tolerance = ctx.flush_tolerance()

    depth = window = None
    if ctx.port_depth is not None:
        depth = ctx.port_depth.nominal
        assert ctx.port_depth_long is not None  # derived with the port depth
        window = (ctx.port_depth_long.nominal - tolerance, depth + tolerance)

    fail_above = safe_upto = piston_low = None
    for from_seat, from_breakout, is_piston in ((port.seat_to_piston, port.piston_clearance, True),
                                                (port.seat_to_valve, port.valve_clearance, False)):
        obstacle = clearance_stack(ctx, from_seat, from_breakout)
        if obstacle is None:
            continue
        nominal_limit = obstacle.nominal - allowance - minimum
        worst_limit = obstacle.nominal - obstacle.down - allowance - minimum
        fail_above = nominal_limit if fail_above is None else min(fail_above, nominal_limit)
        safe_upto = worst_limit if safe_upto is None else min(safe_upto, worst_limit)
        if is_piston:
            piston_low = obstacle.nominal - obstacle.down - allowance

    failing: list[float] = []
    passing: list[float] = []
    if port.well_bore is not None:
        for size_of_hex in catalog.hexes:
            (failing if size_of_hex.socket_od_mm > port.well_bore else passing).append(size_of_hex.across_flats_mm)
    return FitBounds(conical, standard, depth, window, fail_above, safe_upto, piston_low, tuple(failing),
                     tuple(passing), port.well_bore is not None, bool(port.resistor_required))


# --- the rule on one plug --------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class PlugPosition:
    """A plug's nominal thread end and tip, and its worst-case tip, in mm (None: unknown)."""

    thread_end: float | None
    tip: float | None
    tip_worst: float | None


def position_of(reach: float | None, reach_plus: float, gasket: float | None, gasket_minus: float,
                firing_end: float | None, firing_end_plus: float, bounds: FitBounds) -> PlugPosition:
    """The position from plain numbers (a plug's columns), so a caller holding thousands of
    rows need not build a PlugSpec for each. `gasket` None: the plug gives none."""
    if reach is None:
        return PlugPosition(None, None, None)
    if bounds.conical:
        gasket, gasket_minus = 0.0, 0.0
    elif gasket is None:
        if bounds.standard_gasket is None:
            return PlugPosition(None, None, None)
        gasket, gasket_minus = bounds.standard_gasket, 0.0
    thread_end = reach - gasket
    if firing_end is None:
        return PlugPosition(thread_end, None, None)
    tip = thread_end + firing_end
    return PlugPosition(thread_end, tip, tip + reach_plus + gasket_minus + firing_end_plus)


def plug_position(plug: PlugSpec, bounds: FitBounds) -> PlugPosition:
    reach, gasket, firing = plug.reach, plug.gasket_thickness, plug.firing_end
    return position_of(None if reach is None else reach.nominal, 0.0 if reach is None else reach.plus,
                       None if gasket is None else gasket.nominal, 0.0 if gasket is None else gasket.minus,
                       None if firing is None else firing.nominal, 0.0 if firing is None else firing.plus, bounds)


@dataclass(frozen=True, slots=True)
class Classification:
    may_pass: bool      # inside the pass window (a clean pass is possible)
    certain_fail: bool
    certain_no_fail: bool


def classify_position(at: PlugPosition, hex_mm: float | None, resistor: bool | None,
                      bounds: FitBounds) -> Classification:
    may_pass = True
    if bounds.pass_window is not None and at.thread_end is not None:
        low, high = bounds.pass_window
        may_pass = low - SLACK_MM <= at.thread_end <= high + SLACK_MM
    if bounds.resistor_required and resistor is False:
        may_pass = False
    certain_fail = (at.tip is not None and bounds.tip_fail_above is not None
                    and at.tip > bounds.tip_fail_above + SLACK_MM)
    if bounds.hex_checked and hex_mm is not None and hex_mm in bounds.failing_hexes:
        certain_fail = True
    tip_safe = (at.tip_worst is None or bounds.tip_safe_upto is None
                or at.tip_worst <= bounds.tip_safe_upto - SLACK_MM)
    hex_safe = not bounds.hex_checked or hex_mm is None or hex_mm in bounds.passing_hexes
    return Classification(may_pass, certain_fail, tip_safe and hex_safe and not certain_fail)


def classify(plug: PlugSpec, bounds: FitBounds) -> Classification:
    """What the head's bounds alone say about one plug of its thread and seat."""
    return classify_position(plug_position(plug, bounds), plug.hex, plug.resistor, bounds)


# --- ranking --------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class RankKey:
    """Closest to flush first (|protrusion|), then the largest worst-case piston margin."""

    protrusion: float | None  # |thread end - port depth|, nominal
    piston_margin: float | None  # worst case

    def class_key(self, group: int) -> tuple[int, bool, float, bool, float]:
        """The order of verdict groups and keys; plugs with equal class keys rank by sku."""
        return (group,
                self.protrusion is None, self.protrusion or 0.0,
                self.piston_margin is None, -(self.piston_margin or 0.0))

    def sort_key(self, group: int, sku: str) -> tuple[int, bool, float, bool, float, str]:
        return self.class_key(group) + (sku,)


def rank_key(plug: PlugSpec, bounds: FitBounds) -> RankKey:
    """The ranking key from the plug's dimensions, without running the engine."""
    return rank_key_of(plug_position(plug, bounds), bounds)


def rank_key_of(position: PlugPosition, bounds: FitBounds) -> RankKey:
    protrusion = None
    if position.thread_end is not None and bounds.port_depth is not None:
        protrusion = round(abs(position.thread_end - bounds.port_depth), KEY_DIGITS)
    margin = None
    if position.tip_worst is not None and bounds.piston_low is not None:
        margin = round(bounds.piston_low - position.tip_worst, KEY_DIGITS)
    return RankKey(protrusion, margin)


def result_rank_key(result: FitResult) -> RankKey:
    """The same key read from a check's geometry (for tests and for callers holding results)."""
    protrusion = result.geometry.get("thread_protrusion")
    margin = result.geometry.get("piston_margin")
    return RankKey(None if protrusion is None else round(abs(protrusion.nominal), KEY_DIGITS),
                   None if margin is None else round(margin.min, KEY_DIGITS))


def rank(entries: list[tuple[str, str, RankKey]]) -> list[tuple[str, str, RankKey]]:
    """(sku, verdict, key) entries, best first; failures are dropped."""
    kept = [entry for entry in entries if entry[1] != FAIL]
    return sorted(kept, key=lambda entry: entry[2].sort_key(GROUP[entry[1]], entry[0]))
