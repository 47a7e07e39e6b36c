"""The thread-stripping estimate checked against published formulas and hand-worked cases.

Sources (graded as in ../shared/product/reference-values.md (beside the repository)):
- Internal-thread shear area: FED-STD-H28/2B appendix, Machinery's Handbook (published);
  identity at basic dimensions and the M14x1.25 6g/6H figure: derived.
- Torque–tension T = K·F·d: Shigley's Mechanical Engineering Design, 9th ed., eq. 8-27; nut
  factors from its table 8-15 (published; the edition from memory).
- Plug thread class 6e: ISO 965-1, es(e) = −(50 + 11·P) µm (published), tabulated −63 µm for
  P = 1.25; M14x1.25 6e d max 13.937, d min 13.725 mm (reference-values.md, derived).
- Strengths: grey iron ASTM A48 class 30 minimum tensile 207 MPa (published) × 0.9 (VDI 2230,
  from memory); 356.0-T6 sand cast minimum tensile 207 MPa (ASTM B26, from memory) × its
  typical shear/tensile ratio 179/228 (Mamlouk & Zaniewski, published); hot-boss derating
  0.6 (from memory).
"""
from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from service.fitment.strength import (
    HEAD_MATERIAL_SHEAR_STRENGTH,
    EngagementAllowances,
    conical_seat_nut_factor_multiplier,
    engaged_length_mm,
    external_thread_shear_area_mm2,
    gas_load_n,
    internal_thread_shear_area_mm2,
    nut_factor,
    preload_from_torque_n,
    thread_strength,
)
from service.fitment.threads import (
    basic_minor_diameter,
    basic_pitch_diameter,
    fundamental_deviation_um,
    limits_6g_6H,
    thread_limits,
)


@pytest.mark.parametrize("diameter, pitch", [(10.0, 1.0), (12.0, 1.25), (14.0, 1.25), (18.0, 1.5)])
def test_the_internal_shear_area_at_basic_dimensions_is_seven_eighths_of_the_major_cylinder(diameter, pitch):
    engaged = 12.7
    area = internal_thread_shear_area_mm2(engaged, pitch, diameter, basic_pitch_diameter(diameter, pitch))
    # derived identity from the FED-STD-H28/2B formula: As_n = 0.875·π·d·Le at basic size
    assert area == pytest.approx(0.875 * math.pi * diameter * engaged, rel=1e-5)


def test_an_m14_port_at_6g_6h_limits_shears_over_about_29_4_square_mm_per_mm_of_engagement():
    limits = limits_6g_6H(14.0, 1.25)
    per_mm = internal_thread_shear_area_mm2(1.0, 1.25, limits.external_major_min_mm, limits.internal_pitch_max_mm)
    at_half_inch = internal_thread_shear_area_mm2(12.7, 1.25, limits.external_major_min_mm,
                                                  limits.internal_pitch_max_mm)
    # reference-values.md (derived from FED-STD-H28/2B with ISO 965-1 limits): about
    # 29.4 mm²/mm and 373.9 mm² at 12.7 mm; tolerance: the last printed digit
    assert per_mm == pytest.approx(29.4, abs=0.05)
    assert at_half_inch == pytest.approx(373.9, abs=0.05)


def test_the_plug_shells_looser_class_6e_lowers_the_m14_shear_area_to_about_28_67_square_mm_per_mm():
    # ISO 965-1 (published formula, tabulated value): es(e) = −(50 + 11 × 1.25) = −63.75 µm,
    # tabulated −63 µm; reference-values.md (derived): M14x1.25 6e d max 13.937, d min 13.725
    assert fundamental_deviation_um("e", 1.25) == -63.0
    assert -(50 + 11 * 1.25) == pytest.approx(fundamental_deviation_um("e", 1.25), abs=1.0)
    limits = thread_limits(14.0, 1.25, "6e")
    assert limits.external_major_max_mm == pytest.approx(13.937, abs=1e-9)
    assert limits.external_major_min_mm == pytest.approx(13.725, abs=1e-9)
    # hand-worked (FED-STD-H28/2B): π × 0.8 × 13.725 × [0.625 + 0.57735 × (13.725 − 13.3681)]
    # = 28.667 mm² per mm, against 29.44 at 6g (issue 13, item 6: "about 28.67")
    per_mm = internal_thread_shear_area_mm2(1.0, 1.25, limits.external_major_min_mm, limits.internal_pitch_max_mm)
    assert per_mm == pytest.approx(28.667, abs=0.001)
    six_g = limits_6g_6H(14.0, 1.25)
    assert internal_thread_shear_area_mm2(1.0, 1.25, six_g.external_major_min_mm,
                                          six_g.internal_pitch_max_mm) == pytest.approx(29.44, abs=0.005)


def test_the_head_materials_are_credited_with_minimum_strengths_each_graded():
    iron, aluminium = HEAD_MATERIAL_SHEAR_STRENGTH["cast_iron"], HEAD_MATERIAL_SHEAR_STRENGTH["aluminium"]
    # ASTM A48 class 30: 207 MPa minimum tensile (published) × 0.9 (VDI 2230, from memory) = 186.3 MPa,
    # not Shigley's 276 MPa torsional modulus of rupture (48 % higher)
    assert iron.shear_strength_mpa == pytest.approx(186.3)
    assert 276.0 / iron.shear_strength_mpa == pytest.approx(1.48, abs=0.005)
    assert iron.hot_derating == 1.0
    # 356.0-T6 sand cast: 207 MPa minimum tensile (ASTM B26, from memory) × 179/228 (typical
    # shear/tensile, Mamlouk & Zaniewski, published) = 162.5 MPa, below the typical 179 MPa
    assert aluminium.shear_strength_mpa == pytest.approx(162.51, abs=0.01)
    assert aluminium.shear_strength_mpa < 179.0
    # hot boss (150–250 °C): 0.6 of room-temperature strength (from memory) → 97.5 MPa
    assert aluminium.hot_shear_strength_mpa == pytest.approx(97.51, abs=0.01)
    for strength in (iron, aluminium):
        assert strength.grade == strength.hot_derating_grade == "from memory"
        assert "from memory" in strength.source and "from memory" in strength.hot_derating_source


def test_the_plug_thread_shears_over_more_area_than_the_port_thread_at_m14_limits():
    limits = limits_6g_6H(14.0, 1.25)
    internal = internal_thread_shear_area_mm2(10.0, 1.25, limits.external_major_min_mm, limits.internal_pitch_max_mm)
    external = external_thread_shear_area_mm2(10.0, 1.25, limits.internal_minor_max_mm, limits.external_pitch_min_mm)
    # hand-worked from the FED-STD-H28/2B external formula with reference-values.md's limits:
    # π·0.8·10·12.912·[0.625 + 0.57735·(13.028 − 12.912)] = 224.55 mm²; tolerance: the
    # table's 3-decimal rounding
    assert external == pytest.approx(224.55, abs=0.1)
    assert internal > external  # the head's thread sits on the larger diameter


@pytest.mark.parametrize("diameter, pitch", [(10.0, 1.0), (14.0, 1.25), (18.0, 1.5)])
def test_the_external_shear_area_at_basic_dimensions_is_three_quarters_of_the_minor_cylinder(diameter, pitch):
    d1, d2 = basic_minor_diameter(diameter, pitch), basic_pitch_diameter(diameter, pitch)
    # derived from the FED-STD-H28/2B external formula with ISO 68-1's d2 − d1 = 0.433013·P:
    # P/2 + 0.57735 × 0.433013·P = 0.75·P, so As_s = 0.75·π·D1·Le at basic size
    # (M14x1.25: 0.75·π·12.6468 = 29.80 mm²/mm)
    assert external_thread_shear_area_mm2(1.0, pitch, d1, d2) == pytest.approx(0.75 * math.pi * d1, rel=1e-5)


def test_thirty_newton_metres_dry_on_an_m14_flat_seat_gives_about_ten_point_seven_kilonewtons():
    # Shigley eq. 8-27, hand-worked: F = T/(K·d) = 30 / (0.20 × 0.014) = 10 714.3 N, K = 0.20
    # from Shigley table 8-15 (zinc-plated / not stated)
    k = nut_factor("dry", "flat")
    assert k == 0.20
    assert preload_from_torque_n(30.0, k, 14.0) == pytest.approx(10714.3, abs=0.1)


def test_anti_seize_raises_the_preload_at_the_same_torque():
    # Shigley table 8-15: anti-seize K = 0.12; hand-worked F = 30 / (0.12 × 0.014) = 17 857.1 N
    assert preload_from_torque_n(30.0, nut_factor("anti_seize", "flat"), 14.0) == pytest.approx(17857.1, abs=0.1)
    assert nut_factor("oiled", "flat") == 0.18  # Shigley table 8-15: lubricated


def test_a_conical_seat_raises_the_nut_factor_by_its_wedge():
    # hand-worked: 1 + 0.40·(1/sin 31.5° − 1) = 1 + 0.40 × 0.913880 = 1.365552
    assert conical_seat_nut_factor_multiplier() == pytest.approx(1.365552, abs=1e-6)
    assert nut_factor("dry", "conical") == pytest.approx(0.20 * 1.365552, abs=1e-6)


def test_an_unknown_lubrication_is_refused():
    with pytest.raises(ValueError):
        nut_factor("grease", "flat")


def test_a_hundred_bar_on_an_m14_thread_pushes_about_one_point_five_kilonewtons():
    # hand-worked: 100 bar = 10 N/mm²; 10 × π × 14² / 4 = 1539.38 N
    assert gas_load_n(100.0, 14.0) == pytest.approx(1539.38, abs=0.01)


def test_the_engaged_length_takes_the_worst_gasket_and_the_allowances_off_the_overlap():
    allowances = EngagementAllowances.common_practice(1.25)  # relief 2.5, chamfer 1.25, incomplete 1.25
    # hand-worked: s = 1.7: min(12.7 − 1.7, 11.2) − max(2.5 − 1.7, 1.25) − 1.25 = 11.0 − 1.25 − 1.25 = 8.5
    assert engaged_length_mm(reach_min_mm=12.7, standoff_min_mm=1.3, standoff_max_mm=1.7,
                             port_depth_min_mm=11.2, allowances=allowances) == pytest.approx(8.5)
    # hand-worked, conical (s = 0): min(11.7, 11.7) − max(2.5, 1.25) − 1.25 = 7.95
    assert engaged_length_mm(reach_min_mm=11.7, standoff_min_mm=0.0, standoff_max_mm=0.0,
                             port_depth_min_mm=11.7, allowances=allowances) == pytest.approx(7.95)


def test_a_short_plug_in_a_deep_port_engages_few_threads():
    allowances = EngagementAllowances.common_practice(1.25)
    # hand-worked: 9.5 mm reach, 1.5 mm gasket in a 17.5 mm port: 8.0 − 1.25 − 1.25 = 5.5 mm
    assert engaged_length_mm(reach_min_mm=9.5, standoff_min_mm=1.5, standoff_max_mm=1.5,
                             port_depth_min_mm=17.5, allowances=allowances) == pytest.approx(5.5)
    assert engaged_length_mm(reach_min_mm=2.0, standoff_min_mm=1.5, standoff_max_mm=1.5,
                             port_depth_min_mm=17.5, allowances=allowances) == 0.0


def test_a_full_m14_estimate_in_a_hot_aluminium_boss_matches_the_hand_worked_safety_factor():
    limits = thread_limits(14.0, 1.25, "6e")
    result = thread_strength(
        torque_nm=30.0, lubrication="dry", seat="flat", nominal_diameter_mm=14.0, pitch_mm=1.25,
        external_major_min_mm=limits.external_major_min_mm, internal_pitch_max_mm=limits.internal_pitch_max_mm,
        engaged_length_mm=8.5, shear_strength_mpa=HEAD_MATERIAL_SHEAR_STRENGTH["aluminium"].hot_shear_strength_mpa,
        peak_pressure_bar=100.0)
    # hand-worked: area 28.667 × 8.5 = 243.67 mm² (6e, above); × 97.51 MPa (162.51 minimum × 0.6
    # hot boss) = 23 760 N; load 10 714.3 + 1 539.4 = 12 253.7 N; safety factor 1.939, above the
    # 1.5 of common practice
    assert result.shear_area_mm2 == pytest.approx(243.67, abs=0.01)
    assert result.strip_strength_n == pytest.approx(23760, abs=1)
    assert result.safety_factor == pytest.approx(1.939, abs=0.001)
    assert result.min_safety_factor == 1.5
    assert not result.at_risk


engaged_lengths = st.floats(min_value=0.5, max_value=25.0, allow_nan=False)


@given(shorter=engaged_lengths, extra=st.floats(min_value=0.0, max_value=10.0),
       torque=st.floats(min_value=5.0, max_value=60.0), lubrication=st.sampled_from(["dry", "oiled", "anti_seize", None]),
       seat=st.sampled_from(["flat", "conical"]), pressure=st.floats(min_value=0.0, max_value=200.0))
def test_more_engaged_length_never_lowers_the_strip_safety_factor(shorter, extra, torque, lubrication, seat, pressure):
    limits = limits_6g_6H(14.0, 1.25)

    def factor(length: float) -> float:
        return thread_strength(
            torque_nm=torque, lubrication=lubrication, seat=seat, nominal_diameter_mm=14.0, pitch_mm=1.25,
            external_major_min_mm=limits.external_major_min_mm, internal_pitch_max_mm=limits.internal_pitch_max_mm,
            engaged_length_mm=length, shear_strength_mpa=179.0, peak_pressure_bar=pressure).safety_factor

    assert factor(shorter + extra) >= factor(shorter)


@given(reach=st.floats(min_value=5.0, max_value=30.0), extra=st.floats(min_value=0.0, max_value=10.0),
       gasket=st.floats(min_value=0.0, max_value=3.0), port=st.floats(min_value=5.0, max_value=30.0))
def test_a_longer_reach_never_shortens_the_engaged_length(reach, extra, gasket, port):
    allowances = EngagementAllowances.common_practice(1.25)

    def length(r: float) -> float:
        return engaged_length_mm(reach_min_mm=r, standoff_min_mm=gasket, standoff_max_mm=gasket,
                                 port_depth_min_mm=port, allowances=allowances)

    assert length(reach + extra) >= length(reach)
