"""The parts counter's pure rules (service/fitment/search.py): what a head's bounds decide,
proved against the engine itself; the ranking; interchanges."""
from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from service.fitment import check_fit
from service.fitment.model import Dim, HeatRange, HeatRangeBand, Insert, Options, PlugSpec, PortSpec, Span
from service.fitment.search import (
    FAIL,
    PASS,
    TIP_TOLERANCE_MM,
    WARN,
    RankKey,
    Tolerances,
    classify,
    compare,
    fit_bounds,
    rank,
    rank_key,
    result_rank_key,
)

SETTINGS = settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
FAILING = {"REACH_LONG", "REACH_SHORT", "PISTON_CONTACT", "VALVE_CONTACT", "TOOL_CLEARANCE", "HEX_TRAPPED",
           "SEAT_ANGLE_MISMATCH", "INSERT_PROUD"}

# Lengths in mm on a 0.05 mm grid (as a shop would write them), tolerances 0-0.3 mm.
def lengths(low: float, high: float):
    return st.integers(int(low * 20), int(high * 20)).map(lambda n: n / 20)


tolerances = st.sampled_from([0.0, 0.05, 0.1, 0.15, 0.2, 0.254, 0.3])
dims = lambda low, high: st.tuples(lengths(low, high), tolerances, tolerances).map(lambda t: Dim(*t))
optional = lambda strategy: st.one_of(st.none(), strategy)

seats = st.sampled_from(["flat", "conical"])
hexes = st.sampled_from([None, 14.0, 15.875, 16.0, 16.1, 18.0, 20.8, 20.6375, 22.225, 13.0])


@st.composite
def plug_and_port(draw):
    seat = draw(seats)
    plug = PlugSpec(
        "M14x1.25", seat,
        reach=draw(optional(dims(8, 28))),
        gasket_thickness=None if seat == "conical" else draw(optional(st.one_of(dims(0.5, 2.5), st.just(Dim(0.0))))),
        firing_end=draw(optional(dims(-1, 8))),
        hex=draw(hexes), resistor=draw(st.sampled_from([None, True, False])),
        terminal_height=draw(optional(dims(40, 65))),
        heat_range=draw(st.sampled_from([None, HeatRange("shop", 0.4), HeatRange("shop", 0.7)])),
        gap=draw(st.sampled_from([None, 0.6, 0.9, 1.3])),
        # issue 18: the seat's diameters, around the values that decide (a 20.8 mm six-point hex is
        # 24.018 mm across its corners, a 14 mm twelve-point one 14.494 mm)
        gasket_outside_diameter=None if seat == "conical" else draw(st.sampled_from([None, 18.0, 19.5, 20.0, 21.0])),
        seat_angle_deg=None if seat == "flat" else draw(st.sampled_from([None, 60.0, 62.5, 63.0, 64.5])),
        seat_diameter=None if seat == "flat" else draw(st.sampled_from([None, 17.0, 18.5, 20.0])))
    by_seat = draw(st.booleans())
    port = PortSpec(
        "M14x1.25", seat,
        port_depth=draw(optional(dims(8, 26))),
        piston_clearance=None if by_seat else draw(optional(dims(1, 14))),
        seat_to_piston=draw(optional(dims(10, 40))) if by_seat else None,
        valve_clearance=draw(optional(dims(1, 14))),
        plug_inclination_deg=draw(st.sampled_from([None, 0.0, 12.0, 30.0, 45.0])),
        well_bore=draw(st.sampled_from([None, 21.0, 22.4, 23.0, 26.0, 30.0])),
        hex=draw(st.sampled_from([None, 16.0, 20.8])),
        resistor_required=draw(st.sampled_from([None, True, False])),
        material=draw(st.sampled_from([None, "aluminium", "cast_iron"])),
        heat_range_band=draw(st.sampled_from([None, HeatRangeBand("shop", 0.4, 0.6)])),
        boot_range=draw(st.sampled_from([None, Span(50.0, 60.0)])),
        compression_ratio=draw(st.sampled_from([None, 10.0])), ignition_voltage_kv=draw(st.sampled_from([None, 30.0])),
        # the running clearance: a rule of thumb, a rod's stretch, or none
        max_rpm=draw(st.sampled_from([None, 6500.0, 12_000.0])), rod_material=draw(st.sampled_from([None, "steel"])),
        stroke_mm=86.0, rod_length_mm=145.0, reciprocating_mass_g=draw(st.sampled_from([None, 600.0])),
        rod_section_area_mm2=150.0,
        spot_face_diameter=draw(st.sampled_from([None, 18.5, 20.0, 22.0])),
        counterbore_diameter=draw(st.sampled_from([None, 14.4, 18.0, 24.0, 24.1, 26.0])),
        seat_angle_deg=None if seat == "flat" else draw(st.sampled_from([None, 60.0, 63.0])),
        insert=draw(st.sampled_from([None, Insert("coil"), Insert("coil", Dim(12.0)), Insert("coil", Dim(17.5, 0.2, 0.2)),
                                     Insert("solid", Dim(9.5), "M16x1.5", "carbon_steel")])))
    if port.port_depth is not None and draw(st.booleans()):
        long_side = Dim(port.port_depth.nominal + draw(lengths(0, 3)), 0.1, 0.1)
        port = PortSpec(**{**{name: getattr(port, name) for name in PortSpec.__slots__},
                           "port_depth_long_side": long_side})
    options = Options(stack=draw(st.sampled_from(["worst_case", "rss"])),
                      min_clearance=draw(st.sampled_from([None, 0.5, 2.0])),
                      flush_tolerance=draw(st.sampled_from([None, 0.25, 1.0, 3.0])),
                      max_protrusion=draw(st.sampled_from([None, 0.0, 0.3, 2.0])),
                      max_recess=draw(st.sampled_from([None, 0.2, 1.0, 4.0])),
                      dynamic_allowance=draw(st.sampled_from([None, 0.3])))
    return plug, port, options


@SETTINGS
@given(case=plug_and_port())
def test_what_the_bounds_call_certain_the_engine_confirms(case, catalog):
    plug, port, options = case
    bounds = fit_bounds(port, options, catalog)
    rule = classify(plug, bounds)
    result = check_fit(plug, port, options, catalog)
    fails = {finding.code for finding in result.findings if finding.severity == "fail"}
    if rule.certain_fail:
        assert result.verdict == FAIL and fails & FAILING
    if rule.certain_no_fail:
        assert result.verdict != FAIL, fails
    if result.verdict == PASS:
        assert rule.may_pass


@SETTINGS
@given(case=plug_and_port())
def test_the_rank_key_from_dimensions_equals_the_key_from_the_engines_geometry(case, catalog):
    plug, port, options = case
    bounds = fit_bounds(port, options, catalog)
    assert rank_key(plug, bounds) == result_rank_key(check_fit(plug, port, options, catalog))


def test_clean_passes_come_before_warnings_and_failures_are_left_out():
    entries = [
        ("W-FLUSH", WARN, RankKey(0.0, 5.0)),      # flush but warns: after every pass
        ("P-FAR", PASS, RankKey(0.4, 9.0)),
        ("F-ANY", FAIL, RankKey(0.0, 9.0)),
        ("P-FLUSH-TIGHT", PASS, RankKey(0.0, 2.0)),
        ("P-FLUSH-ROOMY", PASS, RankKey(0.0, 4.0)),
        ("P-NO-PISTON", PASS, RankKey(0.0, None)),  # margin unknown: after known margins
        ("P-FLUSH-ROOMY-B", PASS, RankKey(0.0, 4.0)),
        ("W-UNKNOWN-REACH", WARN, RankKey(None, 5.0)),
        ("W-SHORT", WARN, RankKey(2.0, 8.0)),
    ]
    assert [sku for sku, _verdict, _key in rank(entries)] == [
        "P-FLUSH-ROOMY", "P-FLUSH-ROOMY-B", "P-FLUSH-TIGHT", "P-NO-PISTON", "P-FAR",
        "W-FLUSH", "W-SHORT", "W-UNKNOWN-REACH"]


def test_the_pass_window_of_a_19mm_flat_port_is_a_millimetre_around_flush(catalog):
    # design reach 19, standard M14 gasket 1.5 (seed_catalog/threads.csv, common practice):
    # port depth 17.5; flush tolerance 0.5 mm (engine default, common practice).
    port = PortSpec("M14x1.25", "flat", design_reach=Dim(19.0), piston_clearance=Dim(8.0))
    bounds = fit_bounds(port, Options(), catalog)
    assert bounds.pass_window == pytest.approx((17.0, 18.0))
    # REACH_* fail one M14 pitch (1.25 mm, ISO 68-1) proud or two pitches (2.5 mm) short.
    assert bounds.reach_fail_outside == pytest.approx((15.0, 18.75))
    # piston at 17.5 + 8 = 25.5; minimum clearance 1.5 (default): a nominal tip past 24 fails.
    assert bounds.tip_fail_above == pytest.approx(24.0)
    long_tip = PlugSpec("M14x1.25", "flat", reach=Dim(19.0), firing_end=Dim(6.6))  # tip 24.1
    assert classify(long_tip, bounds).certain_fail
    # 1 mm short (thread end 16.5): past the flush tolerance, inside two pitches: it warns.
    short = PlugSpec("M14x1.25", "flat", reach=Dim(18.0), firing_end=Dim(3.0))
    assert not classify(short, bounds).may_pass and classify(short, bounds).certain_no_fail
    # A 1/2 in plug (12.7 mm, I.S. 34:1954) in this 3/4 in port: 4.8 mm short, the wrong reach.
    assert classify(PlugSpec("M14x1.25", "flat", reach=Dim(12.7), firing_end=Dim(3.0)), bounds).certain_fail


# --- interchanges ----------------------------------------------------------------------

BASE = PlugSpec("M14x1.25", "flat", reach=Dim(19.0, 0.1, 0.1), gasket_thickness=Dim(1.5), firing_end=Dim(3.0),
                hex=16.0, resistor=True, terminal_height=Dim(53.5))


def changed(plug: PlugSpec, **changes) -> PlugSpec:
    return PlugSpec(**{**{name: getattr(plug, name) for name in PlugSpec.__slots__}, **changes})


def test_a_plug_with_a_thicker_gasket_and_longer_reach_sits_the_same_and_interchanges(catalog):
    other = changed(BASE, reach=Dim(19.5), gasket_thickness=Dim(2.0))
    comparison = compare(BASE, other, catalog)
    assert comparison.thread_end_difference == pytest.approx(0.0)
    assert comparison.tip_difference == pytest.approx(0.0)
    assert comparison.terminal_top_difference == pytest.approx(0.5)  # 53.5 + 2.0 vs 53.5 + 1.5


@pytest.mark.parametrize("reach, expected", [(19.5, True), (19.51, False), (18.5, True), (18.49, False)])
def test_the_thread_end_may_move_by_the_flush_tolerance_and_no_more(catalog, reach, expected):
    # 0.5 mm: the engine's default flush tolerance (common practice)
    other = changed(BASE, reach=Dim(reach), firing_end=Dim(3.0 - (reach - 19.0)))  # keep the tip
    assert (compare(BASE, other, catalog) is not None) is expected


@pytest.mark.parametrize("firing_end, expected", [(3.75, True), (3.76, False), (2.25, True), (2.24, False)])
def test_the_tip_may_move_by_half_the_minimum_clearance_and_no_more(catalog, firing_end, expected):
    assert TIP_TOLERANCE_MM == 0.75  # half of the 1.5 mm default minimum clearance (common practice)
    assert (compare(BASE, changed(BASE, firing_end=Dim(firing_end)), catalog) is not None) is expected


def test_a_resistor_plug_is_not_replaced_by_one_without_but_the_reverse_is_fine(catalog):
    without = changed(BASE, resistor=False)
    unknown = changed(BASE, resistor=None)
    assert compare(BASE, without, catalog) is None
    assert compare(BASE, unknown, catalog) is None
    assert compare(without, BASE, catalog) is not None


def test_another_thread_or_seat_never_interchanges_and_another_hex_is_noted(catalog):
    assert compare(BASE, changed(BASE, thread="M12x1.25"), catalog) is None
    assert compare(BASE, changed(BASE, seat="conical", gasket_thickness=None), catalog) is None
    assert compare(BASE, changed(BASE, hex=20.8), catalog).hex_differs is True
    assert compare(BASE, changed(BASE, hex=15.875), catalog).hex_differs is False  # 5/8 in: same family
    assert compare(BASE, changed(BASE, hex=None), catalog).hex_differs is None


def test_unknown_tips_are_only_compared_with_unknown_tips(catalog):
    no_tip = changed(BASE, firing_end=None)
    assert compare(BASE, no_tip, catalog) is None and compare(no_tip, BASE, catalog) is None
    both = compare(no_tip, changed(no_tip, reach=Dim(19.2)), catalog)
    assert both.tip_difference is None and both.closeness == pytest.approx(0.2)


def test_tightened_tolerances_narrow_the_match(catalog):
    other = changed(BASE, firing_end=Dim(3.4))
    assert compare(BASE, other, catalog) is not None
    assert compare(BASE, other, catalog, Tolerances(tip_mm=0.3)) is None


interchange_plugs = st.builds(
    PlugSpec, st.just("M14x1.25"), st.just("flat"), reach=dims(17.5, 20.5),
    gasket_thickness=optional(dims(1.0, 2.0)), firing_end=optional(dims(2, 4)), hex=hexes,
    resistor=st.sampled_from([True, False, None]), terminal_height=optional(dims(50, 56)))


@SETTINGS
@given(first=interchange_plugs, second=interchange_plugs)
def test_interchange_is_symmetric_when_the_resistor_rule_does_not_decide(first, second, catalog):
    second = changed(second, resistor=first.resistor)
    forward, backward = compare(first, second, catalog), compare(second, first, catalog)
    assert (forward is None) == (backward is None)
    if forward is not None:
        assert forward.thread_end_difference == pytest.approx(-backward.thread_end_difference)
        assert forward.closeness == pytest.approx(backward.closeness)
        assert forward.hex_differs == backward.hex_differs


def test_a_replacement_keeps_the_seat_where_both_plugs_give_it(catalog):
    # seat_diameter check's rules: tapers within 1 deg are one taper (common practice, from memory)
    conical = PlugSpec("M14x1.25", "conical", reach=Dim(11.7), firing_end=Dim(3.0), seat_angle_deg=63.0,
                       seat_diameter=18.0)
    assert compare(conical, changed(conical, seat_angle_deg=63.5), catalog) is not None
    assert compare(conical, changed(conical, seat_angle_deg=60.0), catalog) is None
    assert compare(conical, changed(conical, seat_angle_deg=None), catalog) is not None  # not known: not decided
    assert compare(conical, changed(conical, seat_diameter=17.5), catalog) is None  # may leave a taper mouth bare
    assert compare(conical, changed(conical, seat_diameter=18.5), catalog) is not None
    wide = changed(BASE, gasket_outside_diameter=19.0)
    assert compare(wide, changed(wide, gasket_outside_diameter=20.0), catalog) is None  # may overhang a spot face
    assert compare(wide, changed(wide, gasket_outside_diameter=18.5), catalog) is not None
