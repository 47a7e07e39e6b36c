"""ISO metric thread geometry: the basic profile (ISO 68-1) and 6g, 6e / 6H limits (ISO 965-1).

Why this exists: a spark-plug thread is an ordinary ISO metric fine thread, so the
diameters that decide whether a plug strips a port, or how much a port's thread can carry,
follow from the standard's profile and tolerance formulas. Computing them here, instead of
typing a table in, keeps every size the catalogue can name on the same footing.

Pure floats in millimetres (tolerances internally in micrometres, as ISO 965-1 states
them). No pint, no I/O.

Sources and grades (see ../shared/product/reference-values.md (beside the repository)):
- ISO 68-1 basic profile: published.
- ISO 965-1 tolerance formulas (es(g), es(e), Td(6), Td2(6), TD1(6), TD2(6)): published.
- ISO 965-1 size ranges for Td2's geometric-mean diameter, the rounding of computed
  tolerances to the R40 preferred numbers (ISO 3), the TD1 formula for pitches below
  1 mm, and the tabulated fundamental deviations: from memory (not re-read). The result
  agrees with reference-values.md's 6g/6H table for M10x1, M12x1.25, M14x1.25, M18x1.5.
"""
from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

# --- ISO 68-1 basic profile -------------------------------------------------------------
#
# The profile is cut from a fundamental triangle of height H with 60° flanks. The crest of
# the external thread is truncated by H/8 and the root of the internal thread by H/4, so
# along the radius (ISO 68-1):
#   major diameter d                       (crest of the external thread)
#   pitch diameter d2 = d − 2·(3/8)·H      (where groove and ridge are equally wide)
#   minor diameter d1 = d − 2·(5/8)·H      (crest of the internal thread)
# and the external thread's root, with the ISO 965-1 minimum root radius, lies H/6 below d1:
#   d3 = d1 − H/6.

PITCH_DIAMETER_DEPTH_IN_H = 2 * 3 / 8  # d − d2 = 0.75·H = 0.649519·P (ISO 68-1)
MINOR_DIAMETER_DEPTH_IN_H = 2 * 5 / 8  # d − d1 = 1.25·H = 1.082532·P (ISO 68-1)
EXTERNAL_ROOT_DEPTH_IN_H = 2 * 5 / 8 + 1 / 6  # d − d3 = 1.416667·H = 1.226869·P (ISO 965-1)


def fundamental_triangle_height(pitch_mm: float) -> float:
    """H = √3/2 · P: height of the equilateral 60° triangle the profile is cut from (ISO 68-1)."""
    return math.sqrt(3.0) / 2.0 * pitch_mm


def basic_pitch_diameter(nominal_diameter_mm: float, pitch_mm: float) -> float:
    """d2 = D2 = d − 0.75·H (= d − 0.649519·P), ISO 68-1."""
    return nominal_diameter_mm - PITCH_DIAMETER_DEPTH_IN_H * fundamental_triangle_height(pitch_mm)


def basic_minor_diameter(nominal_diameter_mm: float, pitch_mm: float) -> float:
    """d1 = D1 = d − 1.25·H (= d − 1.082532·P), ISO 68-1."""
    return nominal_diameter_mm - MINOR_DIAMETER_DEPTH_IN_H * fundamental_triangle_height(pitch_mm)


def external_root_diameter(nominal_diameter_mm: float, pitch_mm: float) -> float:
    """d3 = d1 − H/6 (= d − 1.226869·P), the external thread's root, ISO 965-1."""
    return nominal_diameter_mm - EXTERNAL_ROOT_DEPTH_IN_H * fundamental_triangle_height(pitch_mm)


# --- ISO 965-1 tolerances, grade 6 ------------------------------------------------------

# ISO 965-1 size ranges for the basic major diameter, "over ... up to and including";
# Td2 uses the geometric mean of the range's limits, not the actual diameter, so every
# size in a range shares one tolerance (from memory).
_SIZE_RANGE_LIMITS_MM = (0.99, 1.4, 2.8, 5.6, 11.2, 22.4, 45.0, 90.0, 180.0, 355.0, 600.0)

# The R40 series of preferred numbers (ISO 3), one decade; the standard rounds its
# computed tolerances to these (from memory). Each is a rounded 10^(k/40).
_R40_DECADE = (
    100, 106, 112, 118, 125, 132, 140, 150, 160, 170, 180, 190, 200, 212, 224, 236, 250,
    265, 280, 300, 315, 335, 355, 375, 400, 425, 450, 475, 500, 530, 560, 600, 630, 670,
    710, 750, 800, 850, 900, 950,
)

# ISO 965-1 tabulates es for positions g and e already rounded; these pitches are the ones
# spark plugs use (from memory; for g, M10x1, M12x1.25, M18x1.5 agree with
# reference-values.md's table; for e, P = 1.25 agrees with its derived M14x1.25 6e limits,
# d max 13.937 and d min 13.725 mm, where the formula would give -63.75 µm).
_TABULATED_ES_UM = {
    "g": {1.0: -26.0, 1.25: -28.0, 1.5: -32.0},
    "e": {1.0: -60.0, 1.25: -63.0, 1.5: -67.0},
}
# es = -(base + 11·P) µm, ISO 965-1 (published): position g base 15, position e base 50.
_ES_BASE_UM = {"g": 15.0, "e": 50.0}
# The external thread classes the engine computes: tolerance grade 6 with position g (the
# general-purpose fit) or e (the larger allowance spark-plug shells are cut to, for
# plating and hot removal; reference-values.md, from memory).
EXTERNAL_CLASSES = ("6g", "6e")

# ISO 965-1's table gives TD1(6) = 236 µm for P = 1 mm, while 230·P^0.7 gives exactly 230,
# which rounds to R40 224 (the geometric midpoint of 224 and 236 is 230.4). The table is
# what gauges and taps are made to, so it wins for this one pitch (from memory; agrees with
# reference-values.md: M10x1 6H D1 8.917 / 9.153).
_TABULATED_TD1_6_UM = {1.0: 236.0}


def size_range_mean_mm(nominal_diameter_mm: float) -> float:
    """Geometric mean of the ISO 965-1 size range holding this diameter (for Td2)."""
    limits = _SIZE_RANGE_LIMITS_MM
    if not limits[0] < nominal_diameter_mm <= limits[-1]:
        raise ValueError(f"nominal diameter {nominal_diameter_mm} mm is outside ISO 965-1 (1 to 600 mm)")
    for low, high in itertools.pairwise(limits):
        if low < nominal_diameter_mm <= high:
            return math.sqrt(low * high)
    raise AssertionError("unreachable: the ranges cover (0.99, 600]")


def round_to_r40(value: float) -> float:
    """The R40 preferred number nearest to `value` on a logarithmic scale.

    Preferred numbers are a geometric series, so "nearest" is measured as a ratio: the
    boundary between two neighbours is the midpoint of their exact exponents k/40. This
    is the rule that reproduces ISO 965-1's tables for TD2 (1.32 × 132 = 174.2 µm → 180,
    where plain arithmetic would give 170).
    """
    if value <= 0 or not math.isfinite(value):
        raise ValueError(f"cannot round {value} to R40")
    decade = 10.0 ** math.floor(math.log10(value) - 2)  # scale so value/decade in [100, 1000)
    exponent = round(40 * math.log10(value / decade / 100))  # k with 10^(k/40) nearest
    index, decades_up = exponent % 40, exponent // 40
    return _R40_DECADE[index] * decade * 10.0**decades_up


def fundamental_deviation_um(position: str, pitch_mm: float) -> float:
    """es for an external tolerance position, ISO 965-1: g −(15 + 11·P) µm, e −(50 + 11·P) µm.

    The tabulated value where we have it; otherwise the formula rounded to the nearest
    micrometre (the standard's own rounding of es is not reproduced exactly: can differ
    by 1 µm).
    """
    tabulated = _TABULATED_ES_UM[position]
    if pitch_mm in tabulated:
        return tabulated[pitch_mm]
    return -float(round(_ES_BASE_UM[position] + 11.0 * pitch_mm))


def major_diameter_tolerance_6_um(pitch_mm: float) -> float:
    """Td(6) = 180·P^(2/3) − 3.15/√P µm, rounded to R40 (ISO 965-1)."""
    return round_to_r40(180.0 * pitch_mm ** (2.0 / 3.0) - 3.15 / math.sqrt(pitch_mm))


def external_pitch_diameter_tolerance_6_um(nominal_diameter_mm: float, pitch_mm: float) -> float:
    """Td2(6) = 90·P^0.4·d^0.1 µm, d the size range's geometric mean, rounded to R40 (ISO 965-1)."""
    return round_to_r40(_external_pitch_tolerance_6_unrounded(nominal_diameter_mm, pitch_mm))


def internal_pitch_diameter_tolerance_6_um(nominal_diameter_mm: float, pitch_mm: float) -> float:
    """TD2(6) = 1.32·Td2(6) µm, rounded to R40 (ISO 965-1).

    The factor is applied to the already-rounded Td2(6) (from memory): applied to the
    unrounded value it would give 170 µm instead of the tabulated 180 µm for M12x1.25.
    """
    return round_to_r40(1.32 * external_pitch_diameter_tolerance_6_um(nominal_diameter_mm, pitch_mm))


def internal_minor_diameter_tolerance_6_um(pitch_mm: float) -> float:
    """TD1(6) µm, ISO 965-1: 230·P^0.7 for P ≥ 1 mm (published), 433·P − 190·P^1.22 for
    P from 0.2 to 0.8 mm (from memory); rounded to R40, tabulated value for P = 1 mm."""
    if pitch_mm in _TABULATED_TD1_6_UM:
        return _TABULATED_TD1_6_UM[pitch_mm]
    if pitch_mm >= 1.0:
        return round_to_r40(230.0 * pitch_mm**0.7)
    return round_to_r40(433.0 * pitch_mm - 190.0 * pitch_mm**1.22)


def _external_pitch_tolerance_6_unrounded(nominal_diameter_mm: float, pitch_mm: float) -> float:
    # ISO 965-1: Td2(6) = 90·P^0.4·d^0.1 with d the geometric mean of the size range.
    return 90.0 * math.pow(pitch_mm, 0.4) * math.pow(size_range_mean_mm(nominal_diameter_mm), 0.1)


@dataclass(frozen=True, slots=True)
class ThreadLimits:
    """Limits of size of an external (plug: 6g or 6e) and a 6H internal (port) thread, in mm.

    The thread-stripping check needs exactly these: the shear area of the port's thread
    uses the plug's smallest major diameter and the port's largest pitch diameter; the
    plug's thread uses the port's largest minor and the plug's smallest pitch diameter.
    """

    nominal_diameter_mm: float
    pitch_mm: float
    external_major_max_mm: float  # d max = d + es
    external_major_min_mm: float  # d min = d max − Td
    external_pitch_max_mm: float  # d2 max = d2 + es
    external_pitch_min_mm: float  # d2 min = d2 max − Td2
    internal_pitch_min_mm: float  # D2 min = D2 (EI = 0 for H)
    internal_pitch_max_mm: float  # D2 max = D2 + TD2
    internal_minor_min_mm: float  # D1 min = D1
    internal_minor_max_mm: float  # D1 max = D1 + TD1
    external_class: str = "6g"  # the plug's class; the port is always 6H


def limits_6g_6H(nominal_diameter_mm: float, pitch_mm: float) -> ThreadLimits:
    """6g/6H limits of size for an ISO metric thread (ISO 965-1), in mm."""
    return thread_limits(nominal_diameter_mm, pitch_mm, "6g")


def thread_limits(nominal_diameter_mm: float, pitch_mm: float, external_class: str) -> ThreadLimits:
    """Limits of size for an external thread of `external_class` (6g or 6e) in a 6H
    internal thread (ISO 965-1), in mm. Grade 6 throughout: the classes differ only in
    the external thread's fundamental deviation es, which moves d and d2 down together."""
    if external_class not in EXTERNAL_CLASSES:
        raise ValueError(f"external thread class must be one of {', '.join(EXTERNAL_CLASSES)}, got {external_class!r}")
    if not (math.isfinite(pitch_mm) and pitch_mm > 0):
        raise ValueError(f"pitch must be a positive number of mm, got {pitch_mm}")
    um = 1e-3  # µm → mm
    es = fundamental_deviation_um(external_class[1], pitch_mm) * um
    pitch_basic = basic_pitch_diameter(nominal_diameter_mm, pitch_mm)
    minor_basic = basic_minor_diameter(nominal_diameter_mm, pitch_mm)
    major_max = nominal_diameter_mm + es
    pitch_max = pitch_basic + es
    return ThreadLimits(
        nominal_diameter_mm=nominal_diameter_mm,
        pitch_mm=pitch_mm,
        external_major_max_mm=major_max,
        external_major_min_mm=major_max - major_diameter_tolerance_6_um(pitch_mm) * um,
        external_pitch_max_mm=pitch_max,
        external_pitch_min_mm=pitch_max
        - external_pitch_diameter_tolerance_6_um(nominal_diameter_mm, pitch_mm) * um,
        internal_pitch_min_mm=pitch_basic,
        internal_pitch_max_mm=pitch_basic
        + internal_pitch_diameter_tolerance_6_um(nominal_diameter_mm, pitch_mm) * um,
        internal_minor_min_mm=minor_basic,
        internal_minor_max_mm=minor_basic + internal_minor_diameter_tolerance_6_um(pitch_mm) * um,
        external_class=external_class,
    )
