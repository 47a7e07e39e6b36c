"""The parts counter's rules: which plugs fit a head, and which plug can replace another.

Both answer from the stock list without running the engine on every plug, so each rule
is stated here on one plug, where tests prove it against the engine itself
(`tests/unit/test_counter_rules.py`); `service.usecases.parts_search` applies them to the
database. Only the contract's geometry is used (fit-check contract, "Geometry"):

    s = installed gasket (flat: the plug's, else the catalogue's standard; conical: 0)
    e = reach - s                                 thread end
    t = e + firing_end                            tip position
    protrusion_short_side = e - D,  protrusion_long_side = e - D_long
    piston margin = smaller of  O - t - a  and  O - e - r·tan θ - a;  valve margin = O_v - t - a_v
    (a: the piston's allowance, a running allowance when the head gives max_rpm; a_v: dynamic_allowance)

## Fitting plugs

From the head alone (`fit_bounds`) come the few numbers that decide which plug designs
need the engine at all, using three facts about bounds: a worst-case or RSS low bound is
never above the nominal, a high bound never below it, and a worst-case bound is never
inside the RSS one.

- A plug certainly FAILS when a nominal value is already past a fail limit: its tip
  beyond `tip_fail_above` or its thread end beyond `edge_fail_above` (piston or valve
  margin under the minimum clearance), or its thread end outside `reach_fail_outside`
  (REACH_LONG above `max_protrusion` or REACH_SHORT below minus `max_recess`).
- A plug certainly does NOT FAIL when its worst-case values are inside every limit
  (`tip_safe_upto`, `edge_safe_upto`, `reach_safe_within`).
- A plug can be a clean pass only if its nominal thread end lies in `pass_window`
  (outside it REACH_LONG or REACH_SHORT is certain), it has a gasket when its seat is
  flat (else GASKET_MISSING), and it has a resistor when the head requires one.
- Tool clearance fails for a catalogue hex whose socket does not pass the well bore.
- Seat diameters (`seat.py`, the rules the engine's `check_seat_diameter` applies): a
  catalogue hex trapped in the head's counterbore fails (an unlisted hex is left to the
  engine); a conical seat whose own angle differs from the head's fails, and with the
  usual angle taken for a plug that gives none it warns; a gasket overhanging the spot
  face and a taper mouth the plug's taper does not cover warn.
- A thread insert standing proud of the port fails every plug, or makes every plug warn
  (and so does one stopping short): the head's bounds run the engine's `check_insert`
  itself, since it reads nothing of the plug.

Failures come only from THREAD/SEAT (left out by the query), REACH, PISTON, VALVE,
TOOL CLEARANCE, the seat diameters (HEX_TRAPPED, SEAT_ANGLE_MISMATCH) and INSERT_PROUD: the deeper checks only warn, and the counter offers no `require` option.
So a design certain to warn and certain not to fail is counted and ranked without the
engine, and checked only if it lands on the requested page; every plug that is listed
has been checked by the engine. Ranking: closest to the chamber first (the nominal
thread end's distance from the break-outs, 0 between them), then the largest worst-case
piston margin, then sku.

## Interchanges

A customer puts a plug on the counter; the shop has another line. If the two sit the
same way in any port (same thread and seat, thread end and tip in the same place, no
resistor lost), the one can replace the other wherever the first one fitted. Nothing
here knows a maker or a part number, and heat ranges are never mapped between scales.
Comparing `e` rather than the reach lets a plug with a thicker gasket and a
correspondingly longer reach count as the same fit. Tolerances (each a documented
choice, with its grade):

- thread end within THREAD_END_TOLERANCE_MM (0.5 mm): the engine's default flush
  tolerance (common practice: less than one M14 thread pitch of 1.25 mm);
- tip within TIP_TOLERANCE_MM (0.75 mm): half the engine's default minimum piston/valve
  clearance of 1.5 mm (common practice, about 0.060 in, from memory). Our choice; the fit
  check against the actual head decides;
- hex: any; another family is noted (`hex_differs`), as HEX_DIFFERS does;
- resistor: a resistor plug is only replaced by a resistor plug (one whose resistor is
  unknown does not count as one); a non-resistor plug may be replaced by either.
- seat (issue 18, where both plugs give the value): a conical seat only by one of the
  same taper angle (`seat.angles_differ`), a flat seat's gasket only by one no wider
  (a wider one may overhang a spot face the original's cleared), a conical seat's taper
  only by one no narrower (a narrower one may leave a taper mouth bare). Where either
  plug leaves the value out, nothing is decided by it: the fit check against the head
  says `NOT_CHECKED` for it.

Nominal values are compared: the tolerances of the two plugs are the makers' and apply
to both. Heat range (only on the same named scale) and terminal top are reported as
differences and rank candidates after the dimensional closeness, but decide nothing.
"""
from __future__ import annotations

from dataclasses import dataclass

from .catalog import Catalog
from .checks import check_insert
from .context import FitContext
from .defaults import CAUTIONS, CONICAL_SEAT_ANGLE_DEG, FLUSH_TOLERANCE_MM
from .geometry import derive, obstacle_distance, shell_edge_offset
from .model import FitResult, HeatRange, Options, PlugSpec, PortSpec
from .seat import across_corners, angles_differ, gasket_overhangs, hex_trapped, taper_mouth_bare

# Slack on every comparison of the bounds, in mm: far above float rounding (1e-12 mm),
# far below anything a gauge reads (1 µm), so a plug exactly on a limit is left to the
# engine rather than decided by the last bit of a float.
SLACK_MM = 1e-6
# Ranking keys are rounded to a nanometre, so two plugs whose keys are equal in exact
# arithmetic but differ in the last bit of a float tie, and then rank by sku.
KEY_DIGITS = 9

PASS, WARN, FAIL = "pass", "warn", "fail"
GROUP = {PASS: 0, WARN: 1}

Range = tuple[float, float]


def stand_off(gasket: float | None, seat: str, standard_gasket: float | None) -> float | None:
    """s, nominal: 0 for a conical seat, else the plug's gasket or the standard one (None:
    neither is known)."""
    if seat == "conical":
        return 0.0
    return gasket if gasket is not None else standard_gasket


# --- fitting plugs: the bounds of a head ------------------------------------------------


@dataclass(frozen=True, slots=True)
class FitBounds:
    """What the head says about every plug of its thread and seat (mm)."""

    conical: bool
    # The installed gasket the engine assumes for a flat plug that gives none (None: the
    # catalogue has no standard for this thread, so such a plug's thread end is unknown).
    standard_gasket: float | None
    port_depth: float | None          # D and D_long, nominal: the ranking's reference
    port_depth_long: float | None
    pass_window: Range | None         # nominal thread ends a clean pass needs; None: no reach check
    reach_fail_outside: Range | None  # nominal thread ends past these certainly fail REACH_*
    reach_safe_within: Range | None   # worst-case thread ends inside these never fail REACH_*
    tip_fail_above: float | None      # None: no piston or valve data
    tip_safe_upto: float | None
    edge_fail_above: float | None     # thread end limits from the shell edge (piston only)
    edge_safe_upto: float | None
    piston_low: float | None          # worst-case seat-to-piston less the allowance, for the margin key
    edge_offset: float                # r·tan θ
    failing_hexes: tuple[float, ...]  # catalogue hexes whose socket does not pass the well bore
    passing_hexes: tuple[float, ...]
    hex_checked: bool                 # the head gives a well bore
    resistor_required: bool
    # The seat's machining (None: not given) and the catalogue hexes trapped in, or turning
    # freely in, the counterbore.
    spot_face: float | None = None
    seat_angle: float | None = None
    trapped_hexes: tuple[float, ...] = ()
    turning_hexes: tuple[float, ...] = ()
    counterbore_checked: bool = False
    # The insert's findings, the same for every plug: the worst severity (0 none or info,
    # 1 warn, 2 fail).
    insert_severity: int = 0


def fit_bounds(port: PortSpec, options: Options, catalog: Catalog) -> FitBounds:
    """The bounds for `port`, computed with the engine's own stacks and defaults."""
    ctx = FitContext(PlugSpec(port.thread, port.seat), port, options, catalog)
    derive(ctx)
    size = catalog.thread(port.thread)
    conical = port.seat == "conical"
    standard = 0.0 if conical else (size.standard_gasket_mm if size is not None else None)
    minimum = ctx.min_clearance()

    depth = depth_long = window = fail_outside = safe_within = None
    if ctx.port_depth is not None and ctx.port_depth_long is not None:
        D, D_long = ctx.port_depth, ctx.port_depth_long
        tolerance, (max_recess, _), (max_protrusion, _) = ctx.flush_tolerance(), ctx.max_recess(), ctx.max_protrusion()
        depth, depth_long = D.nominal, D_long.nominal
        # A finding is raised past the flush tolerance, or past a fail limit set below it.
        window = (D.nominal - (tolerance if max_recess is None else min(tolerance, max_recess)),
                  D_long.nominal + (tolerance if max_protrusion is None else min(tolerance, max_protrusion)))
        no_recess_limit, no_protrusion_limit = float("-inf"), float("inf")
        fail_outside = (no_recess_limit if max_recess is None else D.nominal - max_recess,
                        no_protrusion_limit if max_protrusion is None else D_long.nominal + max_protrusion)
        safe_within = (no_recess_limit if max_recess is None else D.nominal + D.up - max_recess,
                       no_protrusion_limit if max_protrusion is None
                       else D_long.nominal - D_long.down + max_protrusion)

    tip_fail_above = tip_safe_upto = edge_fail_above = edge_safe_upto = piston_low = None
    edge = shell_edge_offset(ctx.plug, port)
    for from_seat, from_breakout, is_piston in ((port.seat_to_piston, port.piston_clearance, True),
                                                (port.seat_to_valve, port.valve_clearance, False)):
        obstacle = obstacle_distance(ctx, from_seat, from_breakout)
        if obstacle is None:
            continue
        # The engine's own allowances: the piston's may be a running allowance (max_rpm).
        allowance = ctx.piston_allowance() if is_piston else ctx.valve_allowance()
        nominal_limit = obstacle.nominal - allowance - minimum
        worst_limit = obstacle.nominal - obstacle.down - allowance - minimum
        tip_fail_above = nominal_limit if tip_fail_above is None else min(tip_fail_above, nominal_limit)
        tip_safe_upto = worst_limit if tip_safe_upto is None else min(tip_safe_upto, worst_limit)
        if is_piston:
            edge_fail_above, edge_safe_upto = nominal_limit - edge, worst_limit - edge
            piston_low = obstacle.nominal - obstacle.down - allowance

    failing: list[float] = []
    passing: list[float] = []
    if port.well_bore is not None:
        for size_of_hex in catalog.hexes:
            (failing if size_of_hex.socket_od_mm > port.well_bore else passing).append(size_of_hex.across_flats_mm)
    trapped: list[float] = []
    turning: list[float] = []
    if port.counterbore_diameter is not None:
        for size_of_hex in catalog.hexes:
            corners = across_corners(size_of_hex.across_flats_mm, size_of_hex.form)
            (trapped if hex_trapped(corners, port.counterbore_diameter) else turning).append(
                size_of_hex.across_flats_mm)
    # The insert check reads only the head: its findings here are every plug's.
    insert_ctx = FitContext(ctx.plug, port, options, catalog)
    derive(insert_ctx)
    check_insert(insert_ctx)
    return FitBounds(conical, standard, depth, depth_long, window, fail_outside, safe_within, tip_fail_above,
                     tip_safe_upto, edge_fail_above, edge_safe_upto, piston_low, edge, tuple(failing),
                     tuple(passing), port.well_bore is not None, bool(port.resistor_required),
                     spot_face=port.spot_face_diameter, seat_angle=port.seat_angle_deg if conical else None,
                     trapped_hexes=tuple(trapped), turning_hexes=tuple(turning),
                     counterbore_checked=port.counterbore_diameter is not None, insert_severity=insert_ctx.worst)


# --- fitting plugs: the rule on one plug ------------------------------------------------


@dataclass(frozen=True, slots=True)
class PlugPosition:
    """A plug's thread end (nominal and its worst-case range) and tip (nominal and its
    worst case towards the chamber), in mm; None: unknown."""

    thread_end: float | None
    thread_end_low: float | None
    thread_end_high: float | None
    tip: float | None
    tip_worst: float | None
    gasket_missing: bool = False


UNKNOWN = PlugPosition(None, None, None, None, None)


def position_of(reach: float | None, reach_plus: float, reach_minus: float, gasket: float | None,
                gasket_plus: float, gasket_minus: float, firing_end: float | None, firing_end_plus: float,
                bounds: FitBounds) -> PlugPosition:
    """The position from plain numbers (a plug's columns), so a caller holding thousands of
    rows need not build a PlugSpec for each. `gasket` None: the plug gives none."""
    if bounds.conical or gasket is None:
        gasket_plus = gasket_minus = 0.0  # the standard gasket is exact
    s = stand_off(gasket, "conical" if bounds.conical else "flat", bounds.standard_gasket)
    if reach is None or s is None:
        return UNKNOWN
    e = reach - s
    low, high = e - reach_minus - gasket_plus, e + reach_plus + gasket_minus
    missing = not bounds.conical and gasket is not None and gasket <= 0.0
    if firing_end is None:
        return PlugPosition(e, low, high, None, None, missing)
    tip = e + firing_end
    return PlugPosition(e, low, high, tip, high + firing_end + firing_end_plus, missing)


def plug_position(plug: PlugSpec, bounds: FitBounds) -> PlugPosition:
    reach, gasket, firing = plug.reach, plug.gasket_thickness, plug.firing_end
    return position_of(None if reach is None else reach.nominal, 0.0 if reach is None else reach.plus,
                       0.0 if reach is None else reach.minus,
                       None if gasket is None else gasket.nominal, 0.0 if gasket is None else gasket.plus,
                       0.0 if gasket is None else gasket.minus,
                       None if firing is None else firing.nominal, 0.0 if firing is None else firing.plus, bounds)


@dataclass(frozen=True, slots=True)
class Classification:
    may_pass: bool      # a clean pass is possible
    certain_fail: bool
    certain_no_fail: bool


def _beyond(value: float | None, limit: float | None) -> bool:
    return value is not None and limit is not None and value > limit + SLACK_MM


def _within(value: float | None, limit: float | None) -> bool:
    return value is None or limit is None or value <= limit - SLACK_MM


def classify_position(at: PlugPosition, hex_mm: float | None, resistor: bool | None,
                      bounds: FitBounds) -> Classification:
    e = at.thread_end
    may_pass = not at.gasket_missing and not (bounds.resistor_required and resistor is False)
    if bounds.pass_window is not None and e is not None:
        low, high = bounds.pass_window
        may_pass = may_pass and low - SLACK_MM <= e <= high + SLACK_MM

    reach_fails = reach_safe = False
    if e is None or bounds.reach_fail_outside is None or bounds.reach_safe_within is None:
        reach_safe = True  # the reach check cannot run: it cannot fail
    else:
        fail_low, fail_high = bounds.reach_fail_outside
        reach_fails = e < fail_low - SLACK_MM or e > fail_high + SLACK_MM
        safe_low, safe_high = bounds.reach_safe_within
        assert at.thread_end_low is not None and at.thread_end_high is not None
        reach_safe = at.thread_end_low >= safe_low + SLACK_MM and at.thread_end_high <= safe_high - SLACK_MM

    hex_fails = bounds.hex_checked and hex_mm is not None and hex_mm in bounds.failing_hexes
    certain_fail = (reach_fails or hex_fails or _beyond(at.tip, bounds.tip_fail_above)
                    or (at.tip is not None and _beyond(e, bounds.edge_fail_above)))
    # Without a tip the engine has no piston margin, so the shell edge cannot fail it either.
    hex_safe = not bounds.hex_checked or hex_mm is None or hex_mm in bounds.passing_hexes
    clearance_safe = _within(at.tip_worst, bounds.tip_safe_upto) and (
        at.tip is None or _within(at.thread_end_high, bounds.edge_safe_upto))
    return Classification(may_pass, certain_fail, reach_safe and clearance_safe and hex_safe and not certain_fail)


def classify(plug: PlugSpec, bounds: FitBounds) -> Classification:
    """What the head's bounds alone say about one plug of its thread and seat."""
    rule = classify_position(plug_position(plug, bounds), plug.hex, plug.resistor, bounds)
    seat_fails, seat_warns, seat_safe = _seat_rules(plug, bounds)
    insert = bounds.insert_severity
    return Classification(rule.may_pass and not seat_warns and not seat_fails and insert == 0,
                          rule.certain_fail or seat_fails or insert == 2,
                          rule.certain_no_fail and seat_safe and insert < 2)


def _seat_rules(plug: PlugSpec, bounds: FitBounds) -> tuple[bool, bool, bool]:
    """(certain to fail, certain to warn, certain not to fail) on the seat's diameters, by
    the engine's rules (`seat.py`; `checks.check_seat_diameter`)."""
    fails = warns = False
    safe = True
    hex_mm = plug.hex
    if bounds.counterbore_checked and hex_mm is not None:
        fails = hex_mm in bounds.trapped_hexes
        safe = hex_mm in bounds.turning_hexes
    if bounds.conical:
        if bounds.seat_angle is not None:
            given = plug.seat_angle_deg is not None
            angle = plug.seat_angle_deg if plug.seat_angle_deg is not None else CONICAL_SEAT_ANGLE_DEG.value
            if angles_differ(angle, bounds.seat_angle):
                warns = True
                if given:
                    fails, safe = True, False
        if bounds.spot_face is not None and plug.seat_diameter is not None:
            warns = warns or taper_mouth_bare(bounds.spot_face, plug.seat_diameter)
    elif bounds.spot_face is not None and plug.gasket_outside_diameter is not None:
        gasket = plug.gasket_thickness
        if gasket is None or gasket.nominal > 1e-9:
            warns = warns or gasket_overhangs(plug.gasket_outside_diameter, bounds.spot_face)
    return fails, warns, safe


# --- fitting plugs: ranking -------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class RankKey:
    """Closest to the chamber first, then the largest worst-case piston margin."""

    flush_distance: float | None  # how far the nominal thread end lies outside the break-outs (0: between)
    piston_margin: float | None  # worst case

    def class_key(self, group: int) -> tuple[int, bool, float, bool, float]:
        """The order of verdict groups and keys; plugs with equal class keys rank by sku."""
        return (group,
                self.flush_distance is None, self.flush_distance or 0.0,
                self.piston_margin is None, -(self.piston_margin or 0.0))

    def sort_key(self, group: int, sku: str) -> tuple[int, bool, float, bool, float, str]:
        return self.class_key(group) + (sku,)


def _key(value: float) -> float:
    return round(value, KEY_DIGITS)


def rank_key(plug: PlugSpec, bounds: FitBounds) -> RankKey:
    """The ranking key from the plug's dimensions, without running the engine."""
    return rank_key_of(plug_position(plug, bounds), bounds)


def rank_key_of(at: PlugPosition, bounds: FitBounds) -> RankKey:
    distance = None
    if at.thread_end is not None and bounds.port_depth is not None and bounds.port_depth_long is not None:
        distance = _key(max(0.0, at.thread_end - bounds.port_depth_long, bounds.port_depth - at.thread_end))
    margin = None
    if at.tip_worst is not None and at.thread_end_high is not None and bounds.piston_low is not None:
        margin = _key(min(bounds.piston_low - at.tip_worst,
                          bounds.piston_low - at.thread_end_high - bounds.edge_offset))
    return RankKey(distance, margin)


def result_rank_key(result: FitResult) -> RankKey:
    """The same key read from a check's geometry (for tests and for callers holding results)."""
    short_side = result.geometry.get("protrusion_short_side")
    long_side = result.geometry.get("protrusion_long_side")
    margin = result.geometry.get("piston_margin")
    distance = None
    if short_side is not None and long_side is not None:
        distance = _key(max(0.0, long_side.nominal, -short_side.nominal))
    return RankKey(distance, None if margin is None else _key(margin.min))


def rank(entries: list[tuple[str, str, RankKey]]) -> list[tuple[str, str, RankKey]]:
    """(sku, verdict, key) entries, best first; failures are dropped."""
    kept = [entry for entry in entries if entry[1] != FAIL]
    return sorted(kept, key=lambda entry: entry[2].sort_key(GROUP[entry[1]], entry[0]))


# --- interchanges -----------------------------------------------------------------------

THREAD_END_TOLERANCE_MM = FLUSH_TOLERANCE_MM.value
TIP_TOLERANCE_MM = 0.75

INTERCHANGE_CAUTIONS = (
    ("Interchange compares dimensions only: heat-range differences are shown, not judged, and never mapped "
     "between scales, and the gap is not compared. Check a replacement against the head (fitting-plugs) "
     "before fitting it."),
    CAUTIONS[0],
)


@dataclass(frozen=True, slots=True)
class Tolerances:
    thread_end_mm: float = THREAD_END_TOLERANCE_MM
    tip_mm: float = TIP_TOLERANCE_MM


@dataclass(frozen=True, slots=True)
class Position:
    """Where a plug's thread ends, its tip and its terminal top sit, from the seat face
    (mm, nominal)."""

    thread_end: float
    tip: float | None
    terminal_top: float | None


@dataclass(frozen=True, slots=True)
class Comparison:
    """How a candidate differs from the original (candidate minus original)."""

    thread_end_difference: float
    tip_difference: float | None      # None: neither plug gives a firing end
    terminal_top_difference: float | None
    heat_range_difference: float | None  # None: a heat range is unknown, or the scales differ
    hex_differs: bool | None          # None: a hex is unknown
    closeness: float                  # |thread end difference| + |tip difference|

    def class_key(self) -> tuple[float, bool, float, bool, float, bool]:
        """Closest first; then the nearest heat range, the nearest terminal top (unknown
        last) and the same hex family. Equal class keys rank by sku."""
        heat, terminal = self.heat_range_difference, self.terminal_top_difference
        return (_key(self.closeness), heat is None, _key(abs(heat or 0.0)), terminal is None,
                _key(abs(terminal or 0.0)), self.hex_differs is True)

    def sort_key(self, sku: str) -> tuple[float, bool, float, bool, float, bool, str]:
        return self.class_key() + (sku,)


def position(plug: PlugSpec, catalog: Catalog) -> Position | None:
    """None when the thread end cannot be placed (no reach, or no gasket to assume)."""
    size = catalog.thread(plug.thread)
    s = stand_off(None if plug.gasket_thickness is None else plug.gasket_thickness.nominal, plug.seat,
                  None if size is None else size.standard_gasket_mm)
    if plug.reach is None or s is None:
        return None
    e = plug.reach.nominal - s
    tip = None if plug.firing_end is None else e + plug.firing_end.nominal
    terminal = None if plug.terminal_height is None else plug.terminal_height.nominal + s
    return Position(e, tip, terminal)


def _hex_family(hex_mm: float, catalog: Catalog) -> str:
    size = catalog.hex_size(hex_mm)
    return size.family if size is not None else f"{hex_mm:g} mm"


def heat_range_difference(original: HeatRange | None, candidate: HeatRange | None) -> float | None:
    """candidate - original on the same named scale (names compared as the heat-range
    check does: trimmed, any case); None otherwise: scales are never mapped."""
    if original is None or candidate is None:
        return None
    if original.scale.strip().casefold() != candidate.scale.strip().casefold():
        return None
    return candidate.value - original.value


def _same_seat_fit(original: PlugSpec, candidate: PlugSpec) -> bool:
    """The candidate's seat meets every head the original's meets, as far as both say."""
    if original.seat_angle_deg is not None and candidate.seat_angle_deg is not None \
            and angles_differ(candidate.seat_angle_deg, original.seat_angle_deg):
        return False
    if original.gasket_outside_diameter is not None and candidate.gasket_outside_diameter is not None \
            and gasket_overhangs(candidate.gasket_outside_diameter, original.gasket_outside_diameter):
        return False
    return not (original.seat_diameter is not None and candidate.seat_diameter is not None
                and taper_mouth_bare(original.seat_diameter, candidate.seat_diameter))


def compare(original: PlugSpec, candidate: PlugSpec, catalog: Catalog,
            tolerances: Tolerances = Tolerances(),
            original_position: Position | None = None) -> Comparison | None:
    """How `candidate` differs from `original`, or None if it cannot replace it."""
    if candidate.thread != original.thread or candidate.seat != original.seat:
        return None
    if original.resistor is True and candidate.resistor is not True:
        return None
    if not _same_seat_fit(original, candidate):
        return None
    here = original_position or position(original, catalog)
    there = position(candidate, catalog)
    if here is None or there is None:
        return None
    thread_end_difference = there.thread_end - here.thread_end
    if abs(thread_end_difference) > tolerances.thread_end_mm + SLACK_MM:
        return None
    if (here.tip is None) != (there.tip is None):
        return None  # one tip unknown: the tips cannot be compared
    tip = None
    if here.tip is not None and there.tip is not None:
        tip = there.tip - here.tip
        if abs(tip) > tolerances.tip_mm + SLACK_MM:
            return None
    terminal = None
    if here.terminal_top is not None and there.terminal_top is not None:
        terminal = there.terminal_top - here.terminal_top
    hex_differs = None
    if original.hex is not None and candidate.hex is not None:
        hex_differs = _hex_family(original.hex, catalog) != _hex_family(candidate.hex, catalog)
    return Comparison(thread_end_difference, tip, terminal, heat_range_difference(original.heat_range,
                                                                                  candidate.heat_range),
                      hex_differs, abs(thread_end_difference) + abs(tip or 0.0))
