"""Thread-repair inserts: the figures the engine needs about a port repaired with a
helical-coil insert or a solid (bushing) insert (issue 18).

With an insert the plug's thread bears on the insert's inner thread, and the insert's
outer thread, larger, bears on the head's material. Which of the two strips first is the
governing interface of `checks.check_thread_strength`; where the insert ends along the
plug axis is `checks.check_insert`'s business.

Pure floats in millimetres and megapascals. Every value says its source and grade.
"""
from __future__ import annotations

from functools import lru_cache

from .designation import format_designation
from .strength import MaterialStrength

COIL, SOLID = "coil", "solid"

# A helical-coil insert is wound from wire of diamond section; the hole is tapped with a
# special ("STI", screw-thread-insert) tap of the same pitch, whose major diameter lies
# 2 x 0.649519 P = 1.299038 P above the nominal size: the wire's radial depth on each
# side is the depth of the basic thread from major to pitch diameter (0.75 H, ISO 68-1).
# This rule is from memory (the wire-insert standards, DIN 8140-2 and the inch-series
# MIL/NASM insert standards, were not re-read): it gives an M14x1.25 insert a tapped hole
# of about 15.62 mm major diameter. Grade: from memory.
COIL_WIRE_DEPTH_PER_PITCH = 2.0 * 0.649519
COIL_TAP_SOURCE = ("coil insert tap: major diameter = nominal + 1.299 x pitch, the same pitch (the wire's radial "
                   "depth, 0.75 H of ISO 68-1, on each side; the wire-insert standards such as DIN 8140-2 were not "
                   "re-read: from memory)")


@lru_cache(maxsize=64)
def coil_outer_thread(nominal_diameter_mm: float, pitch_mm: float) -> tuple[float, float, str]:
    """The tapped thread a coil insert for this size sits in: (major diameter, pitch,
    designation), from memory (see COIL_WIRE_DEPTH_PER_PITCH)."""
    major = nominal_diameter_mm + COIL_WIRE_DEPTH_PER_PITCH * pitch_mm
    return major, pitch_mm, format_designation(round(major, 3), pitch_mm)


# Minimum strengths of insert materials. Shear strength is taken at 0.6 x the minimum
# tensile strength, the usual ratio for ductile steels (common practice, from memory; the
# distortion-energy theory gives 0.577 for yield). Steel keeps its room-temperature
# strength at a plug boss's 150-250 degC (from memory): not derated.
STEEL_SHEAR_PER_TENSILE = 0.6
STAINLESS_MIN_TENSILE_MPA = 515.0  # austenitic 304, annealed: ASTM A240/A276 minimum (from memory)
CARBON_STEEL_MIN_TENSILE_MPA = 320.0  # AISI 1010 hot rolled (Shigley, table A-20, 9th ed.; from memory)

_NOT_DERATED = ("steel keeps its room-temperature strength well past a plug boss's 150-250 degC (from memory): "
                "not derated")

INSERT_MATERIAL_SHEAR_STRENGTH: dict[str, MaterialStrength] = {
    "stainless_steel": MaterialStrength(
        STAINLESS_MIN_TENSILE_MPA * STEEL_SHEAR_PER_TENSILE, "from memory",
        "austenitic stainless 304 annealed: 515 MPa minimum tensile (ASTM A240, from memory; coil-insert wire is "
        "cold-drawn and stronger, so the annealed minimum understates it) x 0.6, the shear/tensile ratio of "
        "ductile steel (common practice, from memory)",
        1.0, "from memory", _NOT_DERATED),
    "carbon_steel": MaterialStrength(
        CARBON_STEEL_MIN_TENSILE_MPA * STEEL_SHEAR_PER_TENSILE, "from memory",
        "plain carbon steel, AISI 1010 hot rolled: 320 MPa tensile (Shigley's Mechanical Engineering Design, "
        "table A-20, 9th ed.; from memory) x 0.6, the shear/tensile ratio of ductile steel (common practice, "
        "from memory)",
        1.0, "from memory", _NOT_DERATED),
}

# An insert whose material is not given: coil inserts are wound from stainless wire
# (common practice, from memory); a solid insert of unknown material is taken as the
# weaker steel listed.
DEFAULT_MATERIAL = {COIL: "stainless_steel", SOLID: "carbon_steel"}

KIND_WORDS = {COIL: "helical-coil", SOLID: "solid (bushing)"}

INSERT_CAUTION = ("A thread-repair insert holds only when it is installed to its maker's instructions (tap, "
                  "depth below the seat face, tang removal, locking): the figures here assume it was.")
ALUMINIUM_COLD_CAUTION = ("Fit and remove plugs in an aluminium head only when the engine is cold: the boss's "
                          "thread is weakest hot.")
