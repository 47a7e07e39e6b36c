"""The seat's diameters: does the gasket bear on the head's spot face, does the hex turn in
a counterbore, do two tapers meet (issue 18).

Pure rules on floats in millimetres and degrees, written once here and used by the
engine's `checks.check_seat_diameter` and by the parts counter's pre-filter
(`search.classify`), so the two cannot disagree.

Geometry (exact):
- a regular hexagon's across-corners is its across-flats / cos 30° = AF · 2/√3;
- a twelve-point (bi-hex) form's outer corners lie on the circle of a regular
  dodecagon of the same across-flats: AF / cos 15° = AF · (√6 − √2).
"""
from __future__ import annotations

import math

from .catalog import Catalog

SIX_POINT, TWELVE_POINT = "six-point", "twelve-point"

# 1/cos 30° = 2/√3 and 1/cos 15° = 4/(√6 + √2) = √6 − √2 (exact identities).
SIX_POINT_CORNERS_PER_FLATS = 2.0 / math.sqrt(3.0)
TWELVE_POINT_CORNERS_PER_FLATS = math.sqrt(6.0) - math.sqrt(2.0)
CORNERS_PER_FLATS = {SIX_POINT: SIX_POINT_CORNERS_PER_FLATS, TWELVE_POINT: TWELVE_POINT_CORNERS_PER_FLATS}

# Two conical seats meet as one taper when their included angles differ by no more than
# this (degrees): each taper is commonly machined to about ±0.5° (common practice, from
# memory), so two tapers within their tolerances can differ by up to 1°.
SEAT_ANGLE_TOLERANCE_DEG = 1.0

# Diameters closer than a nanometre are equal (as checks.EPSILON_MM).
_EPSILON_MM = 1e-9


def across_corners(across_flats_mm: float, form: str) -> float:
    """The hex's diameter across its corners for its form (`SIX_POINT` or `TWELVE_POINT`)."""
    return across_flats_mm * CORNERS_PER_FLATS[form]


def hex_form(catalog: Catalog, across_flats_mm: float) -> tuple[str, bool]:
    """The plug hex's form and whether the catalogue gives it: a hex the catalogue does not
    list is taken as six-point, the form with the larger corners (no false pass)."""
    size = catalog.hex_size(across_flats_mm)
    if size is None:
        return SIX_POINT, False
    return size.form, True


def hex_trapped(across_corners_mm: float, counterbore_mm: float) -> bool:
    """A hex cannot turn in a counterbore no wider than its corners."""
    return across_corners_mm >= counterbore_mm - _EPSILON_MM


def gasket_overhangs(gasket_outside_mm: float, spot_face_mm: float) -> bool:
    """The gasket reaches past the machined spot face."""
    return gasket_outside_mm > spot_face_mm + _EPSILON_MM


def angles_differ(plug_angle_deg: float, port_angle_deg: float) -> bool:
    """Two conical seats whose included angles differ by more than the tolerance."""
    return abs(plug_angle_deg - port_angle_deg) > SEAT_ANGLE_TOLERANCE_DEG + 1e-9


def taper_mouth_bare(port_mouth_mm: float, plug_seat_mm: float) -> bool:
    """The head's taper opens wider at the seat face than the plug's taper reaches: a ring
    of the head's taper is left without the plug's bearing on it."""
    return port_mouth_mm > plug_seat_mm + _EPSILON_MM
