"""The running clearance: the piston's extra travel towards the head at speed.

Sources, graded as in ../shared/product/reference-values.md:
- Slider-crank piston acceleration `ẍ = −r·ω²·(cos ωt + (r/l)·cos 2ωt)` (the two-term
  series), so `r·ω²·(1 + r/l)` at top dead centre: Den Hartog, *Mechanical Vibrations*,
  4th ed. (1956), ch. 5, the kinematics of the reciprocating engine (from memory; the
  same series is in Heywood, *Internal Combustion Engine Fundamentals*, 1988, ch. 2, also
  from memory). Checked here against the exact slider-crank position differentiated
  numerically (derived), which needs no book.
- Young's moduli: Shigley's *Mechanical Engineering Design* (Budynas & Nisbett), 9th ed.,
  table A-5 (from memory): carbon steel 30.0 Mpsi / 207 GPa, aluminium (all alloys)
  10.4 Mpsi / 71.7 GPa, titanium alloys 16.5 Mpsi / 114 GPa. The two columns are checked
  against each other with NIST SP 811 (2008), appendix B: 1 psi = 6 894.757 Pa (published).
- Bearing clearances and the rule of thumb: common practice, from memory (running.py).
"""
from __future__ import annotations

import math
from dataclasses import replace

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from service.catalog_loader import load_catalog
from service.fitment import check_fit
from service.fitment.defaults import RUNNING_CAUTION
from service.fitment.model import Dim, Options, PlugSpec, PortSpec
from service.fitment.running import (
    BEARING_CLEARANCE_MM,
    ROD_MATERIALS,
    ROD_STRETCH,
    RULE_OF_THUMB,
    RULE_OF_THUMB_MM,
    SPEED_BANDS_RPM,
    YOUNGS_MODULUS_MPA,
    angular_speed,
    inertia_load_n,
    rod_stretch_mm,
    rule_of_thumb_mm,
    running_allowance,
)

PA_PER_PSI = 6894.757  # NIST SP 811, 2008, appendix B
MM_PER_INCH = 25.4  # exact, NIST SP 811, 2008, appendix B


# --- the formula ---------------------------------------------------------------------


def _piston_position_mm(theta: float, r: float, rod: float) -> float:
    """Exact slider-crank geometry: the pin's distance from the crank axis (derived)."""
    return r * math.cos(theta) + math.sqrt(rod**2 - (r * math.sin(theta)) ** 2)


@pytest.mark.parametrize(("stroke", "rod"), [(86.0, 145.0), (44.0, 88.5), (57.5, 94.0), (120.0, 130.0)])
def test_the_inertia_load_is_the_exact_slider_crank_acceleration_at_top_dead_centre(stroke, rod):
    """Derived, no book needed: the second derivative of the exact position at θ = 0 by a
    central difference, times ω², times the mass, is the formula's load (the series'
    higher terms vanish at top dead centre, so r·ω²·(1 + r/l) is exact there)."""
    r, rpm, mass_g = stroke / 2.0, 7000.0, 500.0
    h = 1e-4
    d2x_dtheta2 = (_piston_position_mm(h, r, rod) - 2 * _piston_position_mm(0.0, r, rod)
                   + _piston_position_mm(-h, r, rod)) / h**2  # mm per rad²
    acceleration = -d2x_dtheta2 / 1000.0 * angular_speed(rpm) ** 2  # m/s², towards the head
    assert inertia_load_n(mass_g, stroke, rod, rpm) == pytest.approx(mass_g / 1000.0 * acceleration, rel=1e-6)


def test_the_load_follows_den_hartogs_two_term_series_at_top_dead_centre():
    """Den Hartog, 4th ed., ch. 5 (from memory): ẍ = −r·ω²·(cos ωt + (r/l)·cos 2ωt); at
    ωt = 0 the magnitude is r·ω²·(1 + r/l)."""
    r_m, rod_m, omega = 0.043, 0.145, angular_speed(7000.0)
    series = r_m * omega**2 * (math.cos(0.0) + r_m / rod_m * math.cos(0.0))
    assert inertia_load_n(1000.0, 86.0, 145.0, 7000.0) == pytest.approx(1.0 * series, rel=1e-12)


def test_seven_thousand_rpm_is_733_radians_a_second():
    # 7000 × 2π / 60 = 733.038 rad/s (derived)
    assert angular_speed(7000.0) == pytest.approx(733.038, abs=0.001)


# --- the moduli ----------------------------------------------------------------------


@pytest.mark.parametrize(("material", "mpsi", "gpa"), [
    ("steel", 30.0, 207.0),       # Shigley 9th ed. table A-5, carbon steel (from memory)
    ("aluminium", 10.4, 71.7),    # Shigley 9th ed. table A-5, aluminum, all alloys (from memory)
    ("titanium", 16.5, 114.0),    # Shigley 9th ed. table A-5, titanium alloys (from memory)
])
def test_youngs_moduli_are_the_handbooks_in_both_of_its_columns(material, mpsi, gpa):
    assert YOUNGS_MODULUS_MPA[material] == pytest.approx(gpa * 1000.0, rel=1e-9)
    # The handbook's Mpsi column, converted (NIST SP 811), agrees within its rounding (0.5 %).
    assert YOUNGS_MODULUS_MPA[material] == pytest.approx(mpsi * 1e6 * PA_PER_PSI / 1e6, rel=0.005)


def test_every_rod_material_has_a_modulus_and_a_rule_of_thumb():
    assert set(YOUNGS_MODULUS_MPA) == set(RULE_OF_THUMB_MM) == set(ROD_MATERIALS)


# --- hand-derived cases --------------------------------------------------------------


def test_a_steel_rod_at_7000_rpm():
    """Worked by hand. Stroke 86 mm (r = 0.043 m), rod 145 mm (l = 0.145 m, r/l = 0.29655),
    reciprocating mass 600 g, beam section 150 mm², steel E = 207,000 N/mm².

        ω  = 7000 × 2π / 60            = 733.04 rad/s;  ω² = 537,345 s⁻²
        F  = 0.6 × 0.043 × 537,345 × 1.29655 = 17,975 N
        δ  = 17,975 × 145 / (150 × 207,000)  = 2,606,375 / 31,050,000 = 0.0839 mm
        a  = δ + 0.05 + 0.05 + 0.015        = 0.199 mm
    """
    estimate = running_allowance(7000.0, "steel", 86.0, 145.0, 600.0, 150.0)
    assert estimate.method == ROD_STRETCH
    assert estimate.inertia_load_n == pytest.approx(17_975.0, abs=1.0)
    assert estimate.rod_stretch_mm == pytest.approx(0.0839, abs=0.0001)
    assert estimate.allowance_mm == pytest.approx(0.199, abs=0.001)


def test_an_aluminium_rod_at_9000_rpm():
    """Worked by hand, the same crank with an aluminium rod: mass 640 g (its heavier small
    end), beam section 300 mm², E = 71,700 N/mm².

        ω  = 9000 × 2π / 60            = 942.48 rad/s;  ω² = 888,264 s⁻²
        F  = 0.64 × 0.043 × 888,264 × 1.29655 = 31,694 N
        δ  = 31,694 × 145 / (300 × 71,700)   = 4,595,630 / 21,510,000 = 0.2137 mm
        a  = δ + 0.115                      = 0.329 mm

    Against the steel rod at 7,000 rpm: (9000/7000)² = 1.65 times the speed's share of the
    load, 1.07 times the mass, and half the stiffness per unit load (E·A 21.5 against 31.1
    MN): 2.5 times the stretch, and 1.65 times the running allowance.
    """
    estimate = running_allowance(9000.0, "aluminium", 86.0, 145.0, 640.0, 300.0)
    steel = running_allowance(7000.0, "steel", 86.0, 145.0, 600.0, 150.0)
    assert estimate.inertia_load_n == pytest.approx(31_694.0, abs=1.0)
    assert estimate.rod_stretch_mm == pytest.approx(0.2137, abs=0.0001)
    assert estimate.allowance_mm == pytest.approx(0.329, abs=0.001)
    assert estimate.rod_stretch_mm / steel.rod_stretch_mm == pytest.approx(2.55, abs=0.01)
    assert estimate.allowance_mm / steel.allowance_mm == pytest.approx(1.65, abs=0.01)


def test_the_rod_stretch_is_hookes_law():
    # 10 kN on 100 mm of 100 mm² steel: 10,000 × 100 / (100 × 207,000) = 0.0483 mm (derived)
    assert rod_stretch_mm(10_000.0, 100.0, 100.0, 207_000.0) == pytest.approx(0.048309, abs=1e-6)


def test_the_bearing_clearances_are_the_trades_thousandths():
    # common practice, from memory: big end and main 0.002 in each, pin 0.0006 in
    assert BEARING_CLEARANCE_MM == pytest.approx((0.002 + 0.002 + 0.0006) * MM_PER_INCH, abs=0.002)


# --- the rule of thumb ---------------------------------------------------------------


def test_the_rule_of_thumb_stands_in_where_the_mass_or_the_section_is_missing():
    for missing in ({"reciprocating_mass_g": None}, {"rod_section_area_mm2": None}, {"stroke_mm": None},
                    {"rod_length_mm": None}, {"rod_length_mm": 40.0}):  # 40 mm is not longer than r = 43 mm
        inputs = {"rod_material": "steel", "stroke_mm": 86.0, "rod_length_mm": 145.0, "reciprocating_mass_g": 600.0,
                  "rod_section_area_mm2": 150.0, **missing}
        estimate = running_allowance(7000.0, **inputs)
        assert (estimate.method, estimate.allowance_mm, estimate.band_top_rpm) == (RULE_OF_THUMB, 0.20, 8000.0)


def test_the_rule_of_thumb_is_what_the_trade_allows():
    """Common practice, from memory: about 0.005-0.010 in with steel rods at high speed,
    about twice that with aluminium rods, titanium between."""
    for steel in RULE_OF_THUMB_MM["steel"]:
        assert 0.005 * MM_PER_INCH <= steel <= 0.010 * MM_PER_INCH + 1e-9
    for steel, titanium, aluminium in zip(*(RULE_OF_THUMB_MM[m] for m in ("steel", "titanium", "aluminium")),
                                          strict=True):
        assert steel < titanium < aluminium and aluminium / steel == pytest.approx(2.0, abs=0.01)


def test_above_the_last_band_the_rule_grows_with_the_square_of_the_speed():
    top = SPEED_BANDS_RPM[-1]
    assert rule_of_thumb_mm("steel", top) == (0.25, top)
    assert rule_of_thumb_mm("steel", 2 * top) == (pytest.approx(1.0), None)  # 0.25 × 2² (derived)


def test_a_rod_of_no_stated_material_is_taken_as_aluminium_the_most_compliant():
    assert running_allowance(7000.0).rod_material == "aluminium"
    assert min(YOUNGS_MODULUS_MPA, key=YOUNGS_MODULUS_MPA.__getitem__) == "aluminium"


# --- in the engine -------------------------------------------------------------------

PLUG = PlugSpec("M14x1.25", "flat", reach=Dim(19.0), gasket_thickness=Dim(1.5), firing_end=Dim(3.0))
# Invented test numbers (a static tip margin of exactly the 1.5 mm minimum clearance).
HEAD = PortSpec("M14x1.25", "flat", port_depth=Dim(17.5), piston_clearance=Dim(4.5), valve_clearance=Dim(6.0),
                stroke_mm=86.0, rod_length_mm=145.0)
RUNNING = {"max_rpm": 7000.0, "rod_material": "steel", "reciprocating_mass_g": 600.0, "rod_section_area_mm2": 150.0}


def _check(head: PortSpec, options: Options | None = None):
    return check_fit(PLUG, head, options, load_catalog())


def _replace(head: PortSpec, **changes) -> PortSpec:
    return replace(head, **changes)


def test_the_running_allowance_comes_off_the_piston_margin_and_not_the_valve_margin():
    """Static tip margin: O − t = (17.5 + 4.5) − (19.0 − 1.5 + 3.0) = 22.0 − 20.5 = 1.5 mm;
    at 7,000 rpm with the steel rod above, 1.5 − 0.199 = 1.301 mm. The valve margin,
    (17.5 + 6.0) − 20.5 = 3.0 mm, keeps its own (default) allowance of 0."""
    static, running = _check(HEAD), _check(_replace(HEAD, **RUNNING))
    assert static.geometry["piston_margin"].min == pytest.approx(1.5)
    assert running.geometry["piston_margin"].min == pytest.approx(1.5 - 0.19894, abs=1e-5)
    assert running.geometry["valve_margin"].min == pytest.approx(3.0)
    piston = running.analysis["piston"]
    assert piston["dynamic_allowance_method"] == ROD_STRETCH and piston["rod_material"] == "steel"
    assert piston["dynamic_allowance"][:2] == (pytest.approx(0.19894, abs=1e-5), "length")
    assert piston["max_rpm"] == (7000.0, "speed") and piston["rod_section_area"] == (150.0, "area")
    assert piston["inertia_load"][0] == pytest.approx(17_975.0, abs=1.0)
    assert any(note.startswith("piston: running allowance at 7,000 rpm estimated as 0.199 mm")
               for note in running.assumptions)
    assert RUNNING_CAUTION in running.cautions and RUNNING_CAUTION not in static.cautions
    assert any(note.startswith("valve: dynamic_allowance not given: 0 mm used for the valve margin")
               for note in running.assumptions)
    assert static.analysis["piston"]["dynamic_allowance_method"] == "default"


def test_the_running_allowance_can_turn_a_pass_into_piston_contact_and_says_so():
    """1.5 mm static meets the 1.5 mm minimum exactly; less 0.199 mm at speed it does not."""
    assert "PISTON_CONTACT" not in _check(HEAD).codes()
    result = _check(_replace(HEAD, **RUNNING))
    contact = next(f for f in result.findings if f.code == "PISTON_CONTACT")
    assert "running allowance of {dynamic_allowance} at {max_rpm}" in contact.message
    assert contact.values["max_rpm"] == (7000.0, "speed")


def test_an_explicit_dynamic_allowance_wins_over_the_estimate():
    result = _check(_replace(HEAD, **RUNNING), Options(dynamic_allowance=0.05))
    assert result.geometry["piston_margin"].min == pytest.approx(1.45)
    assert result.analysis["piston"]["dynamic_allowance_method"] == "option"
    assert any("the dynamic_allowance option is used" in note for note in result.assumptions)
    assert RUNNING_CAUTION not in result.cautions


def test_partial_running_data_says_what_was_done():
    no_speed = _check(_replace(HEAD, rod_material="steel", reciprocating_mass_g=600.0))
    assert no_speed.analysis["piston"]["dynamic_allowance_method"] == "default"
    assert any("rod data but no max_rpm" in note for note in no_speed.assumptions)
    speed_only = _check(_replace(HEAD, max_rpm=7000.0))
    piston = speed_only.analysis["piston"]
    assert (piston["dynamic_allowance_method"], piston["rod_material"]) == (RULE_OF_THUMB, "aluminium")
    assert piston["dynamic_allowance"][0] == 0.40  # aluminium, up to 8,000 rpm
    notes = " | ".join(speed_only.assumptions)
    assert "rod_material not given: aluminium assumed" in notes
    assert "reciprocating_mass and rod_section_area not given" in notes


def test_no_piston_data_means_no_running_estimate():
    result = _check(_replace(HEAD, piston_clearance=None, **RUNNING))
    assert "piston" not in result.analysis and RUNNING_CAUTION not in result.cautions


SETTINGS = settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@SETTINGS
@given(rpm=st.floats(500.0, 25_000.0), faster=st.floats(0.0, 20_000.0),
       material=st.sampled_from((None, *ROD_MATERIALS)),
       stroke=st.one_of(st.none(), st.floats(20.0, 150.0)), rod=st.one_of(st.none(), st.floats(30.0, 300.0)),
       mass=st.one_of(st.none(), st.floats(20.0, 5000.0)), section=st.one_of(st.none(), st.floats(20.0, 1000.0)),
       clearance=st.floats(0.0, 10.0), tolerance=st.floats(0.0, 0.5), rss=st.booleans())
def test_a_higher_speed_never_increases_the_piston_margin(rpm, faster, material, stroke, rod, mass, section,
                                                          clearance, tolerance, rss):
    head = PortSpec("M14x1.25", "flat", port_depth=Dim(17.5, tolerance, tolerance),
                    piston_clearance=Dim(clearance, tolerance, tolerance), stroke_mm=stroke, rod_length_mm=rod,
                    rod_material=material, reciprocating_mass_g=mass, rod_section_area_mm2=section)
    options = Options(stack="rss" if rss else "worst_case")
    slow = _check(_replace(head, max_rpm=rpm), options).geometry["piston_margin"]
    fast = _check(_replace(head, max_rpm=min(rpm + faster, 25_000.0)), options).geometry["piston_margin"]
    assert fast.nominal <= slow.nominal and fast.min <= slow.min and fast.rss_min <= slow.rss_min


# --- at the boundary -----------------------------------------------------------------


def test_the_head_reads_speeds_in_revolutions_per_minute_only():
    from marshmallow import ValidationError

    from schemas.specs import HeadInputSchema

    base = {"thread": "M14x1.25", "seat": "flat"}
    loaded = HeadInputSchema().load({**base, "max_rpm": "9000 r/min", "rod_material": "aluminum",
                                     "reciprocating_mass": "0.64 kg", "rod_section_area": "3 cm**2"})
    assert (loaded["max_rpm"], loaded["rod_material"]) == (9000.0, "aluminium")
    assert loaded["reciprocating_mass"] == pytest.approx(640.0) and loaded["rod_section_area"] == pytest.approx(300.0)
    # 150 Hz is 9,000 rpm to most readers and 1,432 rpm to pint (a revolution is 2π rad): refused.
    with pytest.raises(ValidationError) as refused:
        HeadInputSchema().load({**base, "max_rpm": "150 Hz"})
    assert "revolutions per minute" in str(refused.value.messages["max_rpm"])


def test_the_result_document_gives_the_running_inputs_in_their_units():
    from service.formats.result_json import result_document

    document = result_document(_check(_replace(HEAD, **RUNNING)), "imperial")
    piston = document["analysis"]["piston"]
    assert piston["max_rpm"] == {"value": 7000.0, "unit": "rpm"}
    assert piston["reciprocating_mass"] == {"value": 600.0, "unit": "g"}  # grams in both systems
    # 150 mm² = 150 / 25.4² in² = 0.2325 in² (NIST SP 811: 1 in = 25.4 mm exactly)
    assert piston["rod_section_area"] == {"value": pytest.approx(0.2325, abs=0.0001), "unit": "in**2"}
    assert piston["dynamic_allowance"]["grade"] == "common practice"
    assert RUNNING_CAUTION in document["cautions"]
