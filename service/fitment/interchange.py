"""Which plugs can replace this one? A purely dimensional comparison.

A customer puts a plug on the counter; the shop has another line. If the two sit the
same way in any port — same thread and seat, thread end and tip in the same place, no
resistor lost — the one can replace the other wherever the first one fitted. Nothing
here knows a maker, a part number or a heat-range scale: no cross-reference table, no
mapping between heat ranges. Heat range and gap are for the fit check against the
head (`fitting-plugs`), which decides with the head's own data.

Positions follow the fit-check contract's geometry, measured from the head's seat face:
thread end `e = reach - s` (s: the installed gasket, flat seat; 0 for conical) and tip
`t = e + firing_end`. Comparing `e` rather than the reach lets a plug with a thicker
gasket and a correspondingly longer reach count as the same fit.

Tolerances (each a documented choice, with its grade):

- thread end within THREAD_END_TOLERANCE_MM (0.5 mm): the engine's default flush
  tolerance (common practice: less than one M14 thread pitch of 1.25 mm), so a
  replacement never turns a flush fit into REACH_LONG or REACH_SHORT by more than what
  already counts as flush;
- tip within TIP_TOLERANCE_MM (0.75 mm): half the engine's default minimum
  piston/valve clearance of 1.5 mm (common practice, about 0.060 in, from memory), so a
  replacement whose tip sits deeper still leaves at least half the minimum clearance
  that the original had. Our choice; the fit check against the actual head decides;
- hex: any; a hex of another family is noted (`hex_differs`), as HEX_DIFFERS does;
- resistor: a resistor plug is only replaced by a resistor plug (a plug whose resistor
  is unknown does not count as one). A non-resistor plug may be replaced by either.

Nominal values are compared: the tolerances of the two plugs are the makers' and apply
to both. The relation is symmetric except for the resistor rule.
"""
from __future__ import annotations

from dataclasses import dataclass

from .catalog import Catalog
from .defaults import FLUSH_TOLERANCE_MM
from .model import PlugSpec

THREAD_END_TOLERANCE_MM = FLUSH_TOLERANCE_MM.value
TIP_TOLERANCE_MM = 0.75
# Equality slack for the tolerance comparisons (float rounding, far below a micrometre).
SLACK_MM = 1e-9
KEY_DIGITS = 9


@dataclass(frozen=True, slots=True)
class Tolerances:
    thread_end_mm: float = THREAD_END_TOLERANCE_MM
    tip_mm: float = TIP_TOLERANCE_MM


@dataclass(frozen=True, slots=True)
class Position:
    """Where a plug's thread ends and its tip sits, from the seat face (mm, nominal)."""

    thread_end: float
    tip: float | None
    terminal_top: float | None


@dataclass(frozen=True, slots=True)
class Comparison:
    """How a candidate differs from the original (candidate minus original, mm)."""

    thread_end_difference: float
    tip_difference: float | None      # None: neither plug gives a firing end
    terminal_top_difference: float | None
    hex_differs: bool | None          # None: a hex is unknown
    closeness: float                  # |thread end difference| + |tip difference|

    def class_key(self) -> tuple[float, bool]:
        """Closest first, then the same hex family first; equal class keys rank by sku."""
        return (round(self.closeness, KEY_DIGITS), self.hex_differs is True)

    def sort_key(self, sku: str) -> tuple[float, bool, str]:
        return self.class_key() + (sku,)


def installed_gasket(plug: PlugSpec, catalog: Catalog) -> float | None:
    """The seat stand-off s: 0 for a conical seat, the plug's gasket, else the standard."""
    if plug.seat == "conical":
        return 0.0
    if plug.gasket_thickness is not None:
        return plug.gasket_thickness.nominal
    size = catalog.thread(plug.thread)
    return None if size is None else size.standard_gasket_mm


def position(plug: PlugSpec, catalog: Catalog) -> Position | None:
    """None when the thread end cannot be placed (no reach, or no gasket to assume)."""
    gasket = installed_gasket(plug, catalog)
    if plug.reach is None or gasket is None:
        return None
    thread_end = plug.reach.nominal - gasket
    tip = None if plug.firing_end is None else thread_end + plug.firing_end.nominal
    terminal = None if plug.terminal_height is None else plug.terminal_height.nominal + gasket
    return Position(thread_end, tip, terminal)


def _hex_family(hex_mm: float, catalog: Catalog) -> str:
    size = catalog.hex_size(hex_mm)
    return size.family if size is not None else f"{hex_mm:g} mm"


def compare(original: PlugSpec, candidate: PlugSpec, catalog: Catalog,
            tolerances: Tolerances = Tolerances(),
            original_position: Position | None = None) -> Comparison | None:
    """How `candidate` differs from `original`, or None if it cannot replace it."""
    if candidate.thread != original.thread or candidate.seat != original.seat:
        return None
    if original.resistor is True and candidate.resistor is not True:
        return None
    here = original_position or position(original, catalog)
    there = position(candidate, catalog)
    if here is None or there is None:
        return None
    thread_end = there.thread_end - here.thread_end
    if abs(thread_end) > tolerances.thread_end_mm + SLACK_MM:
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
    return Comparison(thread_end, tip, terminal, hex_differs, abs(thread_end) + abs(tip or 0.0))


def window(original_position: Position, tolerances: Tolerances = Tolerances()) -> dict[str, tuple[float, float] | None]:
    """The thread-end and tip ranges a candidate must lie in (for narrowing a query;
    `compare` decides). The tip range is None when the original gives no firing end."""
    e, t = original_position.thread_end, original_position.tip
    return {"thread_end": (e - tolerances.thread_end_mm - SLACK_MM, e + tolerances.thread_end_mm + SLACK_MM),
            "tip": None if t is None else (t - tolerances.tip_mm - SLACK_MM, t + tolerances.tip_mm + SLACK_MM)}
