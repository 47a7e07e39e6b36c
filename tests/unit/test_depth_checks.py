"""The four engineering-depth checks on hand-worked cases, through the schemas and engine.

Sources of the numbers (graded as in ../shared/product/reference-values.md (beside the repository)):
- Shear area: FED-STD-H28/2B / Machinery's Handbook with ISO 965-1 limits for a 6e plug
  thread in a 6H M14x1.25 port (d min 13.725, D2 max 13.368): 28.667 mm² per mm of
  engagement (derived).
- T = K·F·d: Shigley eq. 8-27; K from Shigley table 8-15 (dry/not stated 0.20,
  anti-seize 0.12); conical-seat raise 1.365552 (derived in strength.py, common practice).
- Shear strengths (minimums, strength.py): aluminium 162.51 MPa × 0.6 for the hot boss =
  97.508 MPa, cast iron 186.3 MPa (both from memory in part; see test_strength.py).
- Torque guidance M14x1.25 flat in aluminium 25–30 N·m (seed catalogue, common practice).
- Breakdown: Kuffel, Zaengl & Kuffel, Vb = 6.72·√(pd) + 24.36·pd kV (from memory); air
  R = 287.05 J/(kg·K) (ISO 2533, from memory); ISO 2533 sea level 101.325 kPa, 15 °C.
- Slider-crank: Heywood eq. 2.6; default spark 25° before top dead centre with a rod ratio
  of 3.5 (both from memory, spark.py).
Heat-range scales and boot ranges are invented demo values.
"""
from __future__ import annotations

import json
import xml.etree.ElementTree as ET

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from schemas.specs import FitCheckRequestSchema, plug_spec, port_spec
from service.formats.drawing import render_fit_svg
from service.formats.result_json import result_document

M14_FLAT_PLUG = {"thread": "M14x1.25", "seat": "flat", "reach": 12.7, "gasket_thickness": 1.5}
M14_FLAT_HEAD = {"thread": "M14x1.25", "seat": "flat", "port_depth": 11.2, "material": "aluminium",
                 "peak_pressure": 100}


def finding(result, code):
    return next((f for f in result.findings if f.code == code), None)


def not_checked(result, check):
    return next((f for f in result.findings if f.code == "NOT_CHECKED" and f.check == check), None)


def analysed(result, check, name):
    return result.analysis[check][name][0]


# --- thread_strength -------------------------------------------------------------------

def test_a_half_inch_plug_at_the_top_of_the_torque_range_holds_in_aluminium(check):
    result = check(M14_FLAT_PLUG, M14_FLAT_HEAD, {"lubrication": "dry"})
    # hand-worked: torque 30 N·m (top of 25–30); preload 30/(0.20·0.014) = 10 714.3 N; gas
    # 100 bar × π·14²/4 = 1 539.4 N; engaged min(11.2, 11.2) − max(2.5 − 1.5, 1.25) − 1.25
    # = 8.7 mm; area 28.667 × 8.7 = 249.40 mm²; strength × 97.508 MPa = 24 319 N; SF 1.985,
    # above the 1.5 of common practice
    assert analysed(result, "thread_strength", "torque") == pytest.approx(30.0)
    assert analysed(result, "thread_strength", "preload") == pytest.approx(10714.3, abs=0.1)
    assert analysed(result, "thread_strength", "gas_load") == pytest.approx(1539.4, abs=0.1)
    assert analysed(result, "thread_strength", "engaged_length") == pytest.approx(8.7)
    assert analysed(result, "thread_strength", "shear_area") == pytest.approx(249.40, abs=0.01)
    assert analysed(result, "thread_strength", "shear_strength") == pytest.approx(97.508, abs=0.001)
    assert analysed(result, "thread_strength", "strip_strength") == pytest.approx(24319, abs=1)
    assert analysed(result, "thread_strength", "safety_factor") == pytest.approx(1.985, abs=0.001)
    assert finding(result, "THREAD_STRIP_RISK") is None


def test_the_strengths_in_the_analysis_carry_their_grades_and_sources(check):
    analysis = check(M14_FLAT_PLUG, M14_FLAT_HEAD).analysis["thread_strength"]
    value, kind, grade, source = analysis["room_temperature_shear_strength"]
    assert (round(value, 2), kind, grade) == (162.51, "stress", "from memory") and "ASTM B26" in source
    value, kind, grade, source = analysis["hot_boss_derating"]
    assert (value, kind, grade) == (0.6, "ratio", "from memory") and "150-250 degC" in source
    assert analysis["shear_strength"][2] == "from memory"
    assert analysis["shear_area"][2] == "derived" and "6e plug thread" in analysis["shear_area"][3]


def test_a_short_plug_deep_in_a_port_on_anti_seize_risks_stripping_the_head(check):
    plug = dict(M14_FLAT_PLUG, reach=9.5)
    head = dict(M14_FLAT_HEAD, port_depth=17.5)
    result = check(plug, head, {"torque": 30, "lubrication": "anti_seize"})
    # hand-worked: engaged 8.0 − 1.25 − 1.25 = 5.5 mm; area 157.67 mm²; strength × 97.508 MPa
    # = 15 374 N; preload 30/(0.12·0.014) = 17 857.1 N + gas 1 539.4 N; SF 0.793 < 1.5
    risk = finding(result, "THREAD_STRIP_RISK")
    assert risk is not None and risk.severity == "warn"
    assert risk.values["safety_factor"][0] == pytest.approx(0.793, abs=0.001)
    assert risk.values["engaged_length"][0] == pytest.approx(5.5)
    assert risk.values["min_safety_factor"][0] == 1.5
    assert "{" not in risk.message.format_map({k: "" for k in risk.values})  # every placeholder has a value


def test_a_conical_plug_in_cast_iron_counts_the_wedge_of_its_seat(check):
    plug = {"thread": "M14x1.25", "seat": "conical", "reach": 11.7}
    head = {"thread": "M14x1.25", "seat": "conical", "design_reach": 11.7, "material": "cast_iron",
            "peak_pressure": 80}
    result = check(plug, head, {"torque": 20, "lubrication": "dry"})
    # hand-worked: K = 0.20 × 1.365552 = 0.273110; preload 20/(0.273110·0.014) = 5 230.8 N;
    # gas 80 bar × π·14²/4 = 1 231.5 N; engaged 11.7 − 2.5 − 1.25 = 7.95 mm; area 227.90 mm²;
    # strength × 186.3 MPa (not derated: grey iron keeps its strength at a boss's heat) = 42 458 N;
    # SF 6.570
    assert analysed(result, "thread_strength", "nut_factor") == pytest.approx(0.273110, abs=1e-6)
    assert analysed(result, "thread_strength", "preload") == pytest.approx(5230.8, abs=0.1)
    assert analysed(result, "thread_strength", "safety_factor") == pytest.approx(6.570, abs=0.001)


def test_thread_strength_lists_the_defaults_it_applied(check):
    head = {key: value for key, value in M14_FLAT_HEAD.items() if key not in ("material", "peak_pressure")}
    assumptions = " | ".join(check(M14_FLAT_PLUG, head).assumptions)
    for default in ("no planned torque", "aluminium (the weaker)", "lubrication not given", "gas load is left out"):
        assert default in assumptions


def test_without_a_reach_the_thread_strength_is_not_checked_and_a_requirement_fails(check):
    plug = {key: value for key, value in M14_FLAT_PLUG.items() if key != "reach"}
    result = check(plug, M14_FLAT_HEAD, {"require": ["thread_strength"]})
    skipped = not_checked(result, "thread_strength")
    assert skipped.severity == "fail" and "reach" in skipped.message
    assert result.verdict == "fail"


# --- gap_voltage -----------------------------------------------------------------------

ENGINE_HEAD = dict(M14_FLAT_HEAD, compression_ratio=10, ignition_voltage=30)


def test_a_wide_gap_at_compression_ratio_ten_leaves_too_little_reserve(check):
    result = check(dict(M14_FLAT_PLUG, gap=1.2), ENGINE_HEAD)
    # hand-worked: ρ = 101 325/(287.05 × 288.15) = 1.22501 kg/m³; at 25° before TDC (R = 3.5,
    # Heywood eq. 2.6) V/Vc = 1 + 4.5 × 0.119301 = 1.536855, so ×6.506795; as pressure at 293 K
    # 6.70398 bar; pd = 0.804478 bar·cm; Vb = 6.72 × 0.896927 + 24.36 × 0.804478 = 25.62 kV
    # > 24 kV usable (30 kV less the 20 % reserve, common practice); widest gap 1.1140 mm
    margin = finding(result, "GAP_VOLTAGE_MARGIN")
    assert margin is not None and margin.severity == "warn"
    assert margin.values["demand"][0] == pytest.approx(25.62, abs=0.01)
    assert margin.values["usable"][0] == pytest.approx(24.0)
    assert margin.values["largest_gap"][0] == pytest.approx(1.1140, abs=0.0005)
    assert margin.values["spark_advance"][0] == 25.0
    # the upper bound beside it: at TDC pd = 10.3030 × 0.12 = 1.23636 bar·cm → 37.59 kV
    assert margin.values["demand_at_tdc"][0] == pytest.approx(37.59, abs=0.01)
    assert margin.values["demand_at_tdc"][2:] == ("derived", margin.values["demand_at_tdc"][3])
    assert "not a substitute for the engine maker's gap specification" in margin.message
    assert "absolute" in margin.message
    assumptions = " ".join(result.assumptions)
    assert "25 deg before top dead centre" in assumptions and "upper bound" in assumptions


def test_the_gap_option_overrides_the_plugs_gap(check):
    result = check(dict(M14_FLAT_PLUG, gap=1.2), ENGINE_HEAD, {"gap": 0.6})
    # hand-worked: pd = 6.70398 × 0.06 = 0.402239 bar·cm; Vb = 4.2620 + 9.7985 = 14.06 kV < 24 kV
    assert analysed(result, "gap_voltage", "demand") == pytest.approx(14.06, abs=0.01)
    assert finding(result, "GAP_VOLTAGE_MARGIN") is None


def test_boost_given_as_gauge_raises_the_demand_past_the_reserve(check):
    head = dict(ENGINE_HEAD, compression_ratio=9, ignition_voltage=35, boost_pressure="1.5 bar",
                intake_temperature=40)
    result = check(dict(M14_FLAT_PLUG, gap=0.8), head)
    # hand-worked: 1.5 bar gauge + 1.01325 (ISO 2533) = 2.51325 bar absolute; ρ = 251 325/(287.05 ×
    # 313.15) = 2.79593 kg/m³; at 25° V/Vc = 1 + 4 × 0.119301 = 1.477204, ×6.092590; at 293 K
    # 14.3269 bar; pd = 1.14615 bar·cm; Vb = 7.1943 + 27.9203 = 35.11 kV > 28 kV usable; widest
    # gap 0.6207 mm
    assert analysed(result, "gap_voltage", "intake_pressure") == pytest.approx(2.51325)
    assert analysed(result, "gap_voltage", "equivalent_pressure") == pytest.approx(14.3269, abs=0.0001)
    assert analysed(result, "gap_voltage", "demand") == pytest.approx(35.11, abs=0.01)
    assert analysed(result, "gap_voltage", "largest_gap") == pytest.approx(0.6207, abs=0.0001)
    assert finding(result, "GAP_VOLTAGE_MARGIN") is not None
    assert any("boost_pressure is gauge" in text for text in result.assumptions)


def test_spark_timing_and_crank_geometry_replace_the_defaults(check):
    head = dict(ENGINE_HEAD, compression_ratio=8, spark_advance=30, stroke=86, rod_length=150.5)
    result = check(dict(M14_FLAT_PLUG, gap=0.6), head)
    # hand-worked (Heywood eq. 2.6): R = 3.5, V/Vc = 1 + 3.5 × (4.5 − 0.866025 − 3.464102)
    # = 1.594556; density ratio 8 / 1.594556 = 5.01707
    assert analysed(result, "gap_voltage", "density_ratio") == pytest.approx(5.01707, abs=1e-5)
    assert analysed(result, "gap_voltage", "spark_advance") == 30.0
    assumptions = " ".join(result.assumptions)
    assert "spark_advance not given" not in assumptions and "rod_length not given" not in assumptions


def test_a_spark_advance_of_zero_takes_the_charge_at_top_dead_centre(check):
    result = check(dict(M14_FLAT_PLUG, gap=1.2), dict(ENGINE_HEAD, spark_advance=0))
    assert analysed(result, "gap_voltage", "demand") == pytest.approx(37.59, abs=0.01)  # as above, at TDC
    assert analysed(result, "gap_voltage", "demand") == analysed(result, "gap_voltage", "demand_at_tdc")
    assert not any("rod_length not given" in text for text in result.assumptions)  # no volume to work out


def test_without_a_compression_ratio_the_gap_voltage_is_not_checked(check):
    result = check(dict(M14_FLAT_PLUG, gap=0.8), dict(M14_FLAT_HEAD, ignition_voltage=30))
    assert "compression_ratio" in not_checked(result, "gap_voltage").message
    assert "gap_voltage" not in result.analysis


# --- heat_range ------------------------------------------------------------------------

# An invented index (like the demo shop's, seed_catalog/demo/generate.py): 0.00 to 1.00.
BAND_HEAD = dict(M14_FLAT_HEAD, heat_range_band={"scale": "demo-scale", "min": 0.40, "max": 0.60})


def test_a_plug_above_the_heads_band_is_out_of_band_by_the_difference(check):
    result = check(dict(M14_FLAT_PLUG, heat_range={"scale": "demo-scale", "value": 0.75}), BAND_HEAD)
    out = finding(result, "HEAT_RANGE_OUT_OF_BAND")
    assert out is not None and out.severity == "warn"
    assert out.values["distance"][0] == pytest.approx(0.15)  # hand-worked: 0.75 − 0.60
    assert "above" in out.message


def test_a_plug_inside_the_band_on_the_same_scale_in_other_letter_case_passes(check):
    result = check(dict(M14_FLAT_PLUG, heat_range={"scale": "Demo-Scale", "value": 0.5}), BAND_HEAD)
    assert finding(result, "HEAT_RANGE_OUT_OF_BAND") is None
    assert analysed(result, "heat_range", "heat_range") == 0.5


def test_a_heat_range_on_another_scale_is_not_compared(check):
    result = check(dict(M14_FLAT_PLUG, heat_range={"scale": "other-scale", "value": 0.5}), BAND_HEAD)
    skipped = not_checked(result, "heat_range")
    assert "'other-scale'" in skipped.message and "'demo-scale'" in skipped.message
    assert finding(result, "HEAT_RANGE_OUT_OF_BAND") is None


def test_a_plug_without_a_heat_range_is_not_checked(check):
    assert "the plug's heat_range" in not_checked(check(M14_FLAT_PLUG, BAND_HEAD), "heat_range").message


# --- boot ------------------------------------------------------------------------------

def test_a_short_terminal_below_the_boot_range_warns_with_the_distance(check):
    plug = dict(M14_FLAT_PLUG, terminal_height={"value": 50.0, "tol": 0.5})
    head = dict(M14_FLAT_HEAD, boot_range={"min": 52.5, "max": 60})
    result = check(plug, head)
    # hand-worked: terminal top = 50.0 + 1.5 = 51.5 mm, lowest 51.0 (worst case); 52.5 − 51.0 = 1.5 mm
    boot = finding(result, "BOOT_ENGAGEMENT")
    assert boot is not None and boot.severity == "warn"
    assert boot.values["distance"][0] == pytest.approx(1.5)
    assert analysed(result, "boot", "terminal_top") == pytest.approx(51.5)


def test_a_tall_terminal_above_the_boot_range_warns_with_the_distance(check):
    plug = dict(M14_FLAT_PLUG, terminal_height=58.0)
    result = check(plug, dict(M14_FLAT_HEAD, boot_range={"min": 50, "max": 59}))
    # hand-worked: 58.0 + 1.5 = 59.5 mm, 0.5 mm beyond 59
    assert finding(result, "BOOT_ENGAGEMENT").values["distance"][0] == pytest.approx(0.5)


def test_a_terminal_inside_the_boot_range_passes(check):
    plug = dict(M14_FLAT_PLUG, terminal_height=50.0)
    result = check(plug, dict(M14_FLAT_HEAD, boot_range={"min": 50, "max": 55}))
    assert finding(result, "BOOT_ENGAGEMENT") is None
    assert not_checked(result, "boot") is None


def test_a_head_without_a_boot_range_is_not_checked(check):
    result = check(dict(M14_FLAT_PLUG, terminal_height=50.0), M14_FLAT_HEAD)
    assert "boot_range" in not_checked(result, "boot").message


# --- inputs the schemas accept but the physics cannot use ---------------------------------

def test_a_zero_gap_or_an_impossible_crank_is_not_checked_rather_than_an_error(check):
    assert "zero" in not_checked(check(dict(M14_FLAT_PLUG, gap=0), ENGINE_HEAD), "gap_voltage").message
    head = dict(ENGINE_HEAD, spark_advance=20, stroke=100, rod_length=40)  # rod shorter than the crank radius
    assert "rod_length" in not_checked(check(dict(M14_FLAT_PLUG, gap=0.7), head), "gap_voltage").message


def test_a_zero_planned_torque_is_not_checked_rather_than_an_infinite_safety_factor(check):
    result = check(M14_FLAT_PLUG, dict(M14_FLAT_HEAD, peak_pressure=None), {"torque": 0})
    assert "practically no load" in not_checked(result, "thread_strength").message


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(reach=st.floats(0.5, 40), gasket=st.floats(0, 3), depth=st.floats(0.5, 40), firing=st.floats(-3, 8),
       gap=st.floats(0, 5), ratio=st.floats(1, 40), intake=st.floats(0.05, 10), temperature=st.floats(200, 600),
       peak=st.one_of(st.none(), st.floats(1, 500)), volts=st.floats(1, 100), torque=st.floats(0, 500),
       advance=st.floats(-20, 90), stroke=st.floats(5, 2000), rod=st.floats(10, 5000),
       terminal=st.floats(0, 100), seat=st.sampled_from(["flat", "conical"]),
       lubrication=st.sampled_from(["dry", "oiled", "anti_seize"]))
def test_no_request_the_schemas_accept_makes_the_depth_checks_or_the_drawing_fail(
        check, catalog, reach, gasket, depth, firing, gap, ratio, intake, temperature, peak, volts, torque,
        advance, stroke, rod, terminal, seat, lubrication):
    plug = {"thread": "M14x1.25", "seat": seat, "reach": reach, "firing_end": firing, "gap": gap,
            "terminal_height": terminal, "heat_range": {"scale": "s", "value": 0.5}}
    if seat == "flat":
        plug["gasket_thickness"] = gasket
    head = {"thread": "M14x1.25", "seat": seat, "port_depth": depth, "piston_clearance": 5.0, "material": "cast_iron",
            "compression_ratio": ratio, "intake_pressure": f"{intake} bar", "intake_temperature": f"{temperature} K",
            "peak_pressure": peak, "ignition_voltage": volts, "spark_advance": advance, "stroke": stroke,
            "rod_length": rod, "boot_range": {"min": 40, "max": 60},
            "heat_range_band": {"scale": "s", "min": 0.4, "max": 0.6}}
    result = check(plug, head, {"torque": torque, "lubrication": lubrication})
    document = result_document(result, "imperial")
    json.dumps(document, allow_nan=False)  # every number finite
    for check_name in ("thread_strength", "gap_voltage", "heat_range", "boot"):
        assert check_name in result.analysis or not_checked(result, check_name) is not None
    loaded = FitCheckRequestSchema().load({"plug": plug, "head": head})
    svg = render_fit_svg(plug_spec(loaded["plug"]), port_spec(loaded["head"]), result, "metric", catalog=catalog)
    ET.fromstring(svg.encode())
