"""The neutral catalogue of standard sizes, as plain immutable data.

The engine reads the catalogue but never loads it: `service.catalog_loader` reads the
files in `seed_catalog/` and builds a `Catalog`, so the engine stays free of I/O and
tests can hand it a catalogue built in memory.
"""
from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

SEATS = ("flat", "conical")
MATERIALS = ("aluminium", "cast_iron")
# The forms a plug's hex comes in: a plain hexagon, or a twelve-point (bi-hex) shell whose
# socket is slimmer (across corners AF / cos 15° instead of AF / cos 30°, exact geometry).
HEX_FORMS = ("six-point", "twelve-point")
# What a guide's `turn_angle_deg` is for, per seat, said wherever the angle is shown; the
# re-used-gasket angle is shown beside it.
TURN_ANGLE_NOTES = {"flat": "after finger-tight, with a new gasket", "conical": "after finger-tight, on the taper"}

# Hexes closer than this are the same size read in another unit system (16 mm and
# 5/8 in = 15.875 mm differ by 0.125 mm); distinct trade hexes are >= 1 mm apart.
HEX_MATCH_MM = 0.3


@dataclass(frozen=True, slots=True)
class ThreadSize:
    """A spark-plug thread size: ISO 261 designation, nominal diameter and pitch, and the
    ISO 965-1 class the plugs' shell threads are cut to (`threads.EXTERNAL_CLASSES`)."""

    designation: str
    nominal_diameter_mm: float
    pitch_mm: float
    seats: frozenset[str]
    standard_gasket_mm: float | None
    source: str
    plug_thread_class: str = "6e"


@dataclass(frozen=True, slots=True)
class StandardReach:
    """A reach in common use for one thread and seat."""

    thread: str
    seat: str
    reach_mm: float
    tolerance_mm: float | None
    label: str
    source: str


@dataclass(frozen=True, slots=True)
class HexSize:
    """A plug hex (across flats), its form (`HEX_FORMS`) and the outside diameter of the
    thin-wall socket for that form."""

    across_flats_mm: float
    family: str
    label: str
    socket_od_mm: float
    source: str
    form: str = "six-point"


@dataclass(frozen=True, slots=True)
class StatedRange:
    """A torque range exactly as its source states it: the numbers in the source's own
    unit and the step of their last printed digit (25 and 35 N*m: a step of 1). A planned
    torque is compared here, not with a rounded conversion, and anything that rounds to an
    end of the range at the source's own precision counts as inside it."""

    min: float
    max: float
    unit: str
    resolution: float
    newton_metres_per_unit: float


@dataclass(frozen=True, slots=True, eq=False)
class TorqueGuide:
    """Installation-torque guidance for one thread, seat and head material, for clean dry
    threads (`lubrication` "dry") or lowered for a lubricant (`service.fitment.torque`).

    Compared by identity (`eq=False`): each guide is one catalogue row, and the identity
    hash lets the lubricated ranges be cached per guide cheaply.
    """

    thread: str
    seat: str
    material: str
    min_nm: float
    max_nm: float
    turn_angle_deg: float | None  # after finger-tight, with a new gasket (flat) or on the taper (conical)
    source: str
    reused_gasket_turn_angle_deg: float | None = None
    stated: StatedRange | None = None  # the dry range as its source gives it; None: min_nm/max_nm are
    lubrication: str = "dry"


@dataclass(frozen=True)
class Catalog:
    """Everything the engine may look up, keyed for O(1) access on the hot path."""

    version: str
    threads: Mapping[str, ThreadSize]
    reaches: tuple[StandardReach, ...] = ()
    hexes: tuple[HexSize, ...] = ()
    torques: Mapping[tuple[str, str, str], TorqueGuide] = field(default_factory=dict)
    sources: Mapping[str, str] = field(default_factory=dict)
    # Hex look-ups repeat the same few sizes; memoised per catalogue, never compared.
    _hex_memo: dict[float, HexSize | None] = field(default_factory=dict, compare=False, repr=False)

    def thread(self, designation: str) -> ThreadSize | None:
        return self.threads.get(designation)

    def thread_for_diameter(self, nominal_diameter_mm: float) -> ThreadSize | None:
        """The spark-plug thread of this nominal diameter (a bare `M14` means M14x1.25)."""
        for size in self.threads.values():
            if abs(size.nominal_diameter_mm - nominal_diameter_mm) < 1e-9:
                return size
        return None

    def hex_size(self, across_flats_mm: float) -> HexSize | None:
        try:
            return self._hex_memo[across_flats_mm]
        except KeyError:
            size = self._nearest_hex(across_flats_mm)
            if len(self._hex_memo) < 1024:
                self._hex_memo[across_flats_mm] = size
            return size

    def _nearest_hex(self, across_flats_mm: float) -> HexSize | None:
        best: HexSize | None = None
        for size in self.hexes:
            gap = abs(size.across_flats_mm - across_flats_mm)
            if gap <= HEX_MATCH_MM and (best is None or gap < abs(best.across_flats_mm - across_flats_mm)):
                best = size
        return best

    def torque_for(self, thread: str, seat: str, material: str) -> TorqueGuide | None:
        """The dry-thread guidance for this port (lowered for a lubricant by `torque.lubricated`)."""
        return self.torques.get((thread, seat, material))
