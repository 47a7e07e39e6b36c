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

# Hexes closer than this are the same size read in another unit system (16 mm and
# 5/8 in = 15.875 mm differ by 0.125 mm); distinct trade hexes are >= 1 mm apart.
HEX_MATCH_MM = 0.3


@dataclass(frozen=True, slots=True)
class ThreadSize:
    """A spark-plug thread size: ISO 261 designation, nominal diameter and pitch."""

    designation: str
    nominal_diameter_mm: float
    pitch_mm: float
    seats: frozenset[str]
    standard_gasket_mm: float | None
    source: str


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
    """A plug hex (across flats) with the outside diameter of its thin-wall socket."""

    across_flats_mm: float
    family: str
    label: str
    socket_od_mm: float
    source: str


@dataclass(frozen=True, slots=True)
class TorqueGuide:
    """Installation-torque guidance for one thread, seat and head material."""

    thread: str
    seat: str
    material: str
    min_nm: float
    max_nm: float
    turn_angle_deg: float | None
    source: str
    reused_gasket_turn_angle_deg: float | None = None


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
        return self.torques.get((thread, seat, material))
