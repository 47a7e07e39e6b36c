"""Will the head's thread hold the plug? A stripping estimate for the port's internal thread.

The plug's steel shell is far stronger than an aluminium or cast-iron head, so the thread
that strips is the head's. The load on it is the installation preload (from the torque by
the short-form torque–tension relation) plus the gas load of peak cylinder pressure on the
area the plug seals. Its strength is the internal thread's shear area over the engaged
length (with the plug's thread at the loose end of its class, 6e where unsure) times the
head material's minimum shear strength, derated for a hot aluminium boss.

Everything is an estimate for comparing choices: the values are guidance, and the engine
maker's service data, local regulations and licensed practice come first. Pure floats in
millimetres, newtons, newton-metres, bar and megapascals; no units library here.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from typing import NamedTuple

from .threads import ThreadLimits, thread_limits

_new = tuple.__new__

# tan 30°: the flank term of a 60° thread in the shear-area formulas (ISO 68-1 profile).
TAN_30 = 0.57735

# Short-form nut factors K (Shigley's Mechanical Engineering Design, Budynas & Nisbett,
# 9th ed. (2011; the edition from memory), table 8-15, published values). A spark-plug
# shell is plated, so "dry" takes the zinc-plated value (the low end of the unplated-black
# 0.30 .. plated 0.20 span); the low end of K gives the HIGH end of preload, so the
# stripping load is not underestimated.
NUT_FACTOR_BY_LUBRICATION: dict[str, float] = {
    "dry": 0.20,  # Shigley table 8-15: zinc-plated 0.20 (black, unplated 0.30)
    "oiled": 0.18,  # Shigley table 8-15: lubricated 0.18
    "anti_seize": 0.12,  # Shigley table 8-15: anti-seize 0.12
}
# Shigley table 8-15: "not stated" 0.20, used when the request names no lubrication.
NUT_FACTOR_NOT_STATED = 0.20

# A conical seat wedges: the seat's normal force is F / sin(α) for an axial force F on a
# cone of half-angle α, so the seat's share of the tightening torque grows by 1/sin(α).
# α = 31.5° for the 63° included taper usual on plug seats (common practice). The share
# of torque that goes into seat friction is about 0.5 in Shigley's worked case
# (μ = μc = 0.15: collar term 0.1125 of K ≈ 0.21, derived from Shigley eq. 8-27's long
# form); we take 0.40, the low end of the 40–50 % usually quoted (common practice), so
# the raise — and thus the preload under-estimate — stays small. Grade: common practice.
CONICAL_SEAT_HALF_ANGLE_DEG = 31.5
SEAT_FRICTION_SHARE = 0.40

# Allowances that shorten the engaged length below the geometric overlap, in pitches.
# Grade: common practice, from memory; each is stated in the result's assumptions.
THREAD_RELIEF_PITCHES = 2.0  # relief groove under the plug's seat: about two pitches wide
LEAD_CHAMFER_PITCHES = 1.0  # the port's entry countersink takes about one pitch of thread
INCOMPLETE_THREAD_PITCHES = 1.0  # the plug's chamfered last thread carries no load

# Warn below this strip safety factor. Grade: common practice — static design factors
# of 1.5–2 on ultimate strength are usual for well-known loads. We take the low end because
# the strengths below are already minimums (not typical values) and a hot aluminium boss is
# already derated: a higher factor on top would count the same weakness twice and warn on
# ordinary fits (a 1/2 in plug at the top of its range in an aluminium head).
MIN_STRIP_SAFETY_FACTOR = 1.5


@lru_cache(maxsize=64)
def port_thread_limits(nominal_diameter_mm: float, pitch_mm: float, plug_thread_class: str) -> ThreadLimits:
    """ISO 965-1 limits of the plug's class in a 6H port, cached: a build list repeats a
    handful of sizes."""
    return thread_limits(nominal_diameter_mm, pitch_mm, plug_thread_class)


@dataclass(frozen=True, slots=True)
class MaterialStrength:
    """The shear strength a head material is credited with: its minimum at room
    temperature and the share of it a running plug boss keeps, each with its grade
    (`model.GRADES`) and source, so the result can say how sure each number is."""

    shear_strength_mpa: float
    grade: str
    source: str
    hot_derating: float
    hot_derating_grade: str
    hot_derating_source: str

    @property
    def hot_shear_strength_mpa(self) -> float:
        """The strength the stripping estimate uses: the minimum, derated for the hot boss."""
        return self.shear_strength_mpa * self.hot_derating


# Cast aluminium 356.0-T6, sand cast: minimum tensile strength 207 MPa (30 ksi; ASTM B26,
# from memory: the published minimum the reference values give is A356.0-T6's 234 MPa,
# the better alloy, so the lower 356.0 figure is taken for a head of unknown alloy).
# Minimum shear is not tabulated; it is taken at the alloy's typical shear/tensile ratio,
# 179 / 228 MPa (Aluminum Association data as tabulated by Mamlouk & Zaniewski, Materials
# for Civil and Construction Engineers, 3rd ed. (2011; the edition from memory), published
# values): 207 x 179 / 228 = 162.5 MPa.
ALUMINIUM_MIN_TENSILE_MPA = 207.0
ALUMINIUM_SHEAR_PER_TENSILE = 179.0 / 228.0
# Grey cast iron ASTM A48 class 30: minimum tensile 207 MPa (published); for stripping its
# shear strength is taken near 0.9 x tensile (VDI 2230's table of shear-strength ratios,
# from memory) = 186.3 MPa. The 276 MPa used before is Shigley's torsional modulus of
# rupture (table A-24), about 48 % above a stripping shear strength.
GREY_IRON_MIN_TENSILE_MPA = 207.0
GREY_IRON_SHEAR_PER_TENSILE = 0.9

# The lowest shear strength we can stand behind for each head material (reference-values.md).
HEAD_MATERIAL_SHEAR_STRENGTH: dict[str, MaterialStrength] = {
    "aluminium": MaterialStrength(
        ALUMINIUM_MIN_TENSILE_MPA * ALUMINIUM_SHEAR_PER_TENSILE,
        "from memory",
        "cast aluminium 356.0-T6 sand cast, minimum: 207 MPa minimum tensile (ASTM B26, from memory) "
        "x 179/228, the alloy's typical shear/tensile ratio (Aluminum Association data as tabulated by "
        "Mamlouk & Zaniewski, Materials for Civil and Construction Engineers, 3rd ed.; published)",
        0.6,
        "from memory",
        "a plug boss runs at roughly 150-250 degC, where cast Al-Si-Mg T6 alloys keep roughly half to "
        "two thirds of their room-temperature strength (elevated-temperature tables of the aluminium "
        "handbooks, from memory; no edition re-read): 0.6 is taken",
    ),
    "cast_iron": MaterialStrength(
        GREY_IRON_MIN_TENSILE_MPA * GREY_IRON_SHEAR_PER_TENSILE,
        "from memory",
        "grey cast iron ASTM A48 class 30: 207 MPa minimum tensile (published) x 0.9, the shear/tensile "
        "ratio for grey iron in VDI 2230's table of shear-strength ratios (from memory)",
        1.0,
        "from memory",
        "grey cast iron keeps its room-temperature strength well past a plug boss's 150-250 degC "
        "(it falls off above about 400 degC; from memory): not derated",
    ),
}


@dataclass(frozen=True, slots=True)
class EngagementAllowances:
    """Lengths in mm taken off the geometric thread overlap (see the module constants)."""

    thread_relief_mm: float
    lead_chamfer_mm: float
    incomplete_thread_mm: float

    @classmethod
    @lru_cache(maxsize=16)
    def common_practice(cls, pitch_mm: float) -> EngagementAllowances:
        return cls(
            thread_relief_mm=THREAD_RELIEF_PITCHES * pitch_mm,
            lead_chamfer_mm=LEAD_CHAMFER_PITCHES * pitch_mm,
            incomplete_thread_mm=INCOMPLETE_THREAD_PITCHES * pitch_mm,
        )


class ThreadStrength(NamedTuple):
    """What the stripping estimate computed (newtons, mm, mm², MPa). A NamedTuple: one
    is made per fit check, and a tuple is the cheapest record Python builds."""

    torque_nm: float
    nut_factor: float
    preload_n: float
    gas_load_n: float
    engaged_length_mm: float
    shear_area_mm2: float
    shear_strength_mpa: float
    strip_strength_n: float
    safety_factor: float
    min_safety_factor: float

    @property
    def at_risk(self) -> bool:
        return self.safety_factor < self.min_safety_factor


def internal_thread_shear_area_mm2(
    engaged_length_mm: float, pitch_mm: float, external_major_min_mm: float, internal_pitch_max_mm: float
) -> float:
    """Shear area of the internal (head) thread over the engaged length.

    Uses the external thread's smallest major diameter and the internal thread's largest
    pitch diameter: the loosest fit in the tolerance classes, so the least area.
    """
    n = 1.0 / pitch_mm  # threads per mm
    # FED-STD-H28/2B appendix; Machinery's Handbook, 29th ed. (the edition from memory): As_n = π·n·Le·d_min·[1/(2n) + tan30°·(d_min − D2_max)]
    return (
        math.pi * n * engaged_length_mm * external_major_min_mm
        * (1.0 / (2.0 * n) + TAN_30 * (external_major_min_mm - internal_pitch_max_mm))
    )


def external_thread_shear_area_mm2(
    engaged_length_mm: float, pitch_mm: float, internal_minor_max_mm: float, external_pitch_min_mm: float
) -> float:
    """Shear area of the external (plug) thread; shown for completeness, the head strips first."""
    n = 1.0 / pitch_mm
    # FED-STD-H28/2B appendix; Machinery's Handbook, 29th ed. (the edition from memory): As_s = π·n·Le·D1_max·[1/(2n) + tan30°·(d2_min − D1_max)]
    return (
        math.pi * n * engaged_length_mm * internal_minor_max_mm
        * (1.0 / (2.0 * n) + TAN_30 * (external_pitch_min_mm - internal_minor_max_mm))
    )


def conical_seat_nut_factor_multiplier(
    half_angle_deg: float = CONICAL_SEAT_HALF_ANGLE_DEG, seat_friction_share: float = SEAT_FRICTION_SHARE
) -> float:
    """How much a taper seat raises K: the seat's torque share grows by 1/sin(α)."""
    # wedge on a cone: normal force = F / sin(α), so seat friction torque scales by 1/sin(α)
    return 1.0 + seat_friction_share * (1.0 / math.sin(math.radians(half_angle_deg)) - 1.0)


# The default taper's multiplier, worked out once: every conical-seat fit check uses it.
_CONICAL_SEAT_MULTIPLIER = conical_seat_nut_factor_multiplier()


def nut_factor(lubrication: str | None, seat: str) -> float:
    """K for this lubrication and seat; unknown lubrication values raise ValueError."""
    if lubrication is None:
        base = NUT_FACTOR_NOT_STATED
    elif lubrication in NUT_FACTOR_BY_LUBRICATION:
        base = NUT_FACTOR_BY_LUBRICATION[lubrication]
    else:
        raise ValueError(f"unknown lubrication {lubrication!r}")
    if seat == "conical":
        return base * _CONICAL_SEAT_MULTIPLIER
    return base


def preload_from_torque_n(torque_nm: float, nut_factor_k: float, nominal_diameter_mm: float) -> float:
    """Axial preload in N from the tightening torque."""
    # Shigley, 9th ed., eq. 8-27: T = K·F·d  →  F = T / (K·d), d in metres
    return torque_nm / (nut_factor_k * nominal_diameter_mm / 1000.0)


def gas_load_n(peak_pressure_bar: float, major_diameter_mm: float) -> float:
    """Peak cylinder pressure on the area the plug seals, taken at the thread's major diameter.

    The absolute pressure is used (not gauge): about 1 bar more, on the safe side.
    """
    # force = pressure × area; 1 bar = 0.1 N/mm² (NIST SP 811); area = π·d²/4
    return peak_pressure_bar * 0.1 * math.pi * major_diameter_mm**2 / 4.0


def engaged_length_mm(
    *,
    reach_min_mm: float,
    standoff_min_mm: float,
    standoff_max_mm: float,
    port_depth_min_mm: float,
    allowances: EngagementAllowances,
) -> float:
    """Worst-case length over which plug and head threads carry load, never below zero.

    In head coordinates (origin at the seat face, positive into the chamber) the plug's
    full threads run from `relief − s` to `reach − s` and the port's from the lead chamfer
    to the port depth; one incomplete thread is taken off the overlap. The overlap grows
    with reach and port depth, so their minimums are used; it is concave in the stand-off
    `s`, so its minimum lies at one end of the stand-off's tolerance and both are tried.
    """

    # overlap(s) = min(reach - s, D) - max(relief - s, chamfer) - incomplete, at both ends of
    # the stand-off's tolerance. Written out with conditional expressions, not an inner
    # function and min()/max(): every fit check runs this, and here each builtin call costs
    # more than its arithmetic. `b if b < a else a` is exactly min(a, b) (the first on a
    # tie), `b if b > a else a` exactly max(a, b).
    relief, chamfer = allowances.thread_relief_mm, allowances.lead_chamfer_mm
    incomplete = allowances.incomplete_thread_mm
    end, start = reach_min_mm - standoff_min_mm, relief - standoff_min_mm
    at_min = ((min(end, port_depth_min_mm))
              - (max(start, chamfer)) - incomplete)
    end, start = reach_min_mm - standoff_max_mm, relief - standoff_max_mm
    at_max = ((min(end, port_depth_min_mm))
              - (max(start, chamfer)) - incomplete)
    least = min(at_min, at_max)
    return max(0.0, least)


def thread_strength(
    *,
    torque_nm: float,
    lubrication: str | None,
    seat: str,
    nominal_diameter_mm: float,
    pitch_mm: float,
    external_major_min_mm: float,
    internal_pitch_max_mm: float,
    engaged_length_mm: float,
    shear_strength_mpa: float,
    peak_pressure_bar: float | None,
    min_safety_factor: float = MIN_STRIP_SAFETY_FACTOR,
) -> ThreadStrength:
    """The stripping estimate for the head's thread. No peak pressure means no gas load."""
    k = nut_factor(lubrication, seat)
    preload = preload_from_torque_n(torque_nm, k, nominal_diameter_mm)
    gas = gas_load_n(peak_pressure_bar, nominal_diameter_mm) if peak_pressure_bar else 0.0
    area = internal_thread_shear_area_mm2(engaged_length_mm, pitch_mm, external_major_min_mm, internal_pitch_max_mm)
    # strength = shear area × shear strength (mm² × N/mm²)
    strength = area * shear_strength_mpa
    # safety factor = thread strength / (preload + gas load), the two loads summed conservatively
    load = preload + gas
    safety = strength / load if load > 0.0 else math.inf
    # Positional through tuple.__new__: a NamedTuple built by keyword runs a Python-level
    # __new__, and one is built per fit check. Order: the fields of `ThreadStrength`.
    return _new(ThreadStrength, (torque_nm, k, preload, gas, engaged_length_mm, area, shear_strength_mpa,
                                 strength, safety, min_safety_factor))
