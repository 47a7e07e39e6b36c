"""Worked geometry cases, each derived by hand from the contract's geometry
(../shared/product/fit-check-contract.md, "Geometry"):

    s = gasket (flat) or 0 (conical); e = reach - s
    protrusion_short_side = e - D; protrusion_long_side = e - D_long
    t = e + firing_end; O = D + piston_clearance (or seat_to_piston)
    m_p = the smaller of O - t - dynamic_allowance (tip) and O - e - r·tan θ - dynamic_allowance (shell edge)

Reaches are the trade's 3/4 in (19.0 mm as the trade quotes it) and 1/2 in (12.7 mm)
(reference-values.md, common practice; 1 in = 25.4 mm exactly, NIST SP 811).
"""
from __future__ import annotations

import pytest

FLUSH_PLUG = {"thread": "M14x1.25", "seat": "flat", "reach": 19.0, "gasket_thickness": 1.5, "firing_end": 4.0}
FLUSH_HEAD = {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5, "piston_clearance": 8.0}


def codes(result):
    return [f.code for f in result.findings if f.code != "NOT_CHECKED"]


def test_a_flush_fit_passes_with_a_four_millimetre_piston_margin(check):
    """e = 19.0 - 1.5 = 17.5 = D, so Δ = 0; t = 17.5 + 4.0 = 21.5;
    m_p = 17.5 + 8.0 - 21.5 = 4.0 mm (the contract checker's own figure)."""
    result = check(FLUSH_PLUG, FLUSH_HEAD)
    assert result.verdict == "pass"
    assert codes(result) == []
    assert result.geometry["protrusion_short_side"].nominal == pytest.approx(0.0, abs=1e-12)
    assert result.geometry["protrusion_long_side"].nominal == pytest.approx(0.0, abs=1e-12)
    assert result.geometry["tip_position"].nominal == pytest.approx(21.5)
    assert result.geometry["piston_margin"].nominal == pytest.approx(4.0)
    # θ = 0 (not given): the shell edge is O - e = 25.5 - 17.5 = 8.0 mm away; the tip governs.
    assert result.analysis["piston"]["governing_feature"] == "tip"
    assert result.analysis["piston"]["shell_edge_margin"][0] == pytest.approx(8.0)


def test_a_long_reach_plug_in_a_short_port_stands_proud_and_hits_the_piston(check):
    """A 3/4 in plug in a port made for 1/2 in reach: D = R_d - s_std = 12.7 - 1.5 = 11.2
    (s_std from the catalogue, M14 standard gasket 1.5 mm); e = 17.5 so the protrusion is
    6.3 mm, past one pitch (1.25 mm): REACH_LONG fails. t = 21.5; m_p = 11.2 + 3.0 - 21.5
    = -7.3 mm: the electrode meets the piston, and it needs 1.5 - (-7.3) = 8.8 mm more room
    for the default 1.5 mm clearance."""
    head = {"thread": "M14x1.25", "seat": "flat", "design_reach": 12.7, "piston_clearance": 3.0}
    result = check(FLUSH_PLUG, head)
    assert result.verdict == "fail"
    assert codes(result) == ["REACH_LONG", "PISTON_CONTACT"]
    long, contact = result.findings[0], result.findings[1]
    assert long.severity == "fail"
    assert long.values["distance"][0] == pytest.approx(6.3)
    assert contact.values["margin"][0] == pytest.approx(-7.3)
    assert contact.values["overlap"][0] == pytest.approx(7.3)
    assert contact.values["shortfall"][0] == pytest.approx(8.8)
    assert any("standard installed gasket" in text for text in result.assumptions)


def test_a_short_plug_leaves_head_threads_exposed_by_the_difference_in_reach(check):
    """A 1/2 in plug in a 3/4 in port: e = 12.7 - 1.5 = 11.2; protrusion_short_side =
    11.2 - 17.5 = -6.3 mm, more than two pitches (2.5 mm) short: REACH_SHORT fails."""
    plug = dict(FLUSH_PLUG, reach=12.7)
    result = check(plug, FLUSH_HEAD)
    assert result.verdict == "fail"
    assert codes(result) == ["REACH_SHORT"]
    assert result.findings[0].values["distance"][0] == pytest.approx(6.3)
    assert result.geometry["protrusion_short_side"].nominal == pytest.approx(-6.3)


def test_a_thread_end_one_millimetre_short_only_warns(check):
    """reach 18.0: e = 16.5, 1.0 mm short: past the 0.5 mm flush tolerance, inside two
    pitches (2.5 mm): a warning, with the reach that fits flush (17.5 + 1.5 = 19.0)."""
    result = check(dict(FLUSH_PLUG, reach=18.0), FLUSH_HEAD)
    (short,) = [f for f in result.findings if f.code == "REACH_SHORT"]
    assert short.severity == "warn" and result.verdict == "warn"
    assert short.values["fitting_reach_min"][0] == pytest.approx(19.0)


def test_an_inclined_roof_accepts_a_thread_end_between_its_break_outs(check):
    """Short side 17.5, long side 19.0; e = 17.5 lies between: protrusion_short_side 0,
    protrusion_long_side 17.5 - 19.0 = -1.5 mm. The design state of such a port: info."""
    head = dict(FLUSH_HEAD, port_depth_long_side=19.0)
    result = check(FLUSH_PLUG, head)
    assert result.verdict == "pass"
    assert codes(result) == ["REACH_INCLINED_ROOF"]
    assert result.findings[0].values["long_side"][0] == pytest.approx(1.5)
    assert result.geometry["protrusion_long_side"].nominal == pytest.approx(-1.5)


def test_a_conical_plug_in_a_flat_port_fails_on_the_seat_and_has_no_position(check):
    """It cannot seat: where its thread would end, its torque and its margins do not exist,
    so they are left out and the assumptions say why."""
    plug = {"thread": "M14x1.25", "seat": "conical", "reach": 17.5, "firing_end": 4.0}
    result = check(plug, dict(FLUSH_HEAD, material="aluminium"))
    assert result.verdict == "fail"
    assert codes(result) == ["SEAT_MISMATCH"]
    assert result.geometry == {} and result.torque is None
    assert any("cannot be installed" in text for text in result.assumptions)


def test_an_m12_plug_in_an_m14_port_fails_on_the_thread_diameter(check):
    plug = dict(FLUSH_PLUG, thread="M12x1.25", gasket_thickness=1.0, reach=18.5)
    result = check(plug, FLUSH_HEAD)
    assert result.verdict == "fail"
    mismatch = result.findings[0]
    assert mismatch.code == "THREAD_MISMATCH"
    assert mismatch.values["plug_diameter"] == (12.0, "length")
    assert mismatch.values["port_diameter"] == (14.0, "length")
    assert "is smaller than the port's M14x1.25: it does not engage" in mismatch.message


# Tolerances: reach ±0.254 mm is I.S. 34:1954's ±0.010 in (reference-values.md,
# published); the others are round figures chosen for the hand calculation.
TOLERANCED_PLUG = {"thread": "M14x1.25", "seat": "flat",
                   "reach": {"value": 19.0, "tol": 0.254},
                   "gasket_thickness": {"value": 1.5, "tol": 0.2},
                   "firing_end": {"value": 4.0, "tol": 0.3}}


def test_a_tolerance_stack_turns_a_nominal_pass_into_a_worst_case_fail(check):
    """m_p = D + pc - reach + s - fe. Nominal: 17.5 + 6.2 - 19.0 + 1.5 - 4.0 = 2.2 mm,
    above the 1.5 mm minimum. Worst case subtracts every tolerance:
    0.2 + 0.3 + 0.254 + 0.2 + 0.3 = 1.254 -> 0.946 mm, below it: PISTON_CONTACT.
    RSS: sqrt(0.2² + 0.3² + 0.254² + 0.2² + 0.3²) = sqrt(0.324516) = 0.569663 -> 1.630337 mm,
    which passes when the request asks for "stack": "rss"."""
    head = {"thread": "M14x1.25", "seat": "flat", "port_depth": {"value": 17.5, "tol": 0.2},
            "piston_clearance": {"value": 6.2, "tol": 0.3}}
    worst = check(TOLERANCED_PLUG, head)
    margin = worst.geometry["piston_margin"]
    assert margin.nominal == pytest.approx(2.2)
    assert margin.min == pytest.approx(0.946)
    assert margin.max == pytest.approx(3.454)
    assert margin.rss_min == pytest.approx(1.630337, abs=1e-6)
    assert margin.rss_max == pytest.approx(2.769663, abs=1e-6)
    assert worst.verdict == "fail" and "PISTON_CONTACT" in codes(worst)
    statistical = check(TOLERANCED_PLUG, head, {"stack": "rss"})
    assert "PISTON_CONTACT" not in codes(statistical)


def test_seat_to_piston_counts_the_port_depth_tolerance_once(check):
    """With seat_to_piston = 23.7 ± 0.3 (the same 17.5 + 6.2 measured in one go), the
    margin's worst-case spread loses the port depth's 0.2 mm: 1.254 - 0.2 = 1.054 mm."""
    head = {"thread": "M14x1.25", "seat": "flat", "port_depth": {"value": 17.5, "tol": 0.2},
            "seat_to_piston": {"value": 23.7, "tol": 0.3}}
    margin = check(TOLERANCED_PLUG, head).geometry["piston_margin"]
    assert margin.nominal == pytest.approx(2.2)
    assert margin.min == pytest.approx(2.2 - 1.054)


def test_an_asymmetric_tolerance_moves_each_bound_by_its_own_side(check):
    """reach 19.0 +0.1/-0.4: Δ = reach - s - D ranges over [-0.4, +0.1]."""
    plug = dict(FLUSH_PLUG, reach={"value": 19.0, "plus": 0.1, "minus": 0.4})
    protrusion = check(plug, FLUSH_HEAD).geometry["protrusion_short_side"]
    assert (protrusion.min, protrusion.max) == (pytest.approx(-0.4), pytest.approx(0.1))


def test_a_recessed_firing_end_leaves_the_shell_nearest_the_piston(check):
    """Firing end -1.0 (recessed): t = 17.5 - 1.0 = 16.5, tip margin 17.5 + 8.0 - 16.5 =
    9.0; the shell's thread end is nearer: O - e = 25.5 - 17.5 = 8.0 mm, which governs."""
    result = check(dict(FLUSH_PLUG, firing_end=-1.0), FLUSH_HEAD)
    assert result.geometry["tip_position"].nominal == pytest.approx(16.5)
    assert result.geometry["piston_margin"].nominal == pytest.approx(8.0)
    piston = result.analysis["piston"]
    assert piston["governing_feature"] == "shell_edge" and piston["tip_margin"][0] == pytest.approx(9.0)


def test_the_dynamic_allowance_comes_off_the_piston_margin(check):
    """m_p = 4.0 - 0.3 = 3.7 mm."""
    result = check(FLUSH_PLUG, FLUSH_HEAD, {"dynamic_allowance": 0.3})
    assert result.geometry["piston_margin"].nominal == pytest.approx(3.7)


def test_a_valve_closer_than_the_minimum_clearance_fails(check):
    """seat_to_valve 22.5: m_v = 22.5 - 21.5 = 1.0 mm < 1.5 mm by 0.5 mm."""
    result = check(FLUSH_PLUG, dict(FLUSH_HEAD, seat_to_valve=22.5))
    contact = next(f for f in result.findings if f.code == "VALVE_CONTACT")
    assert contact.values["margin"][0] == pytest.approx(1.0)
    assert contact.values["shortfall"][0] == pytest.approx(0.5)


def test_values_given_without_a_tolerance_are_exact(check):
    entry = check(FLUSH_PLUG, FLUSH_HEAD).geometry["piston_margin"]
    assert entry.min == entry.max == entry.rss_min == entry.rss_max == pytest.approx(4.0)


def test_every_default_applied_is_listed_in_the_assumptions(check):
    plug = {key: value for key, value in FLUSH_PLUG.items() if key != "gasket_thickness"}
    assumptions = " | ".join(check(plug, FLUSH_HEAD).assumptions)
    for default in ("min_clearance", "flush_tolerance", "dynamic_allowance",
                    "standard installed gasket", "head material"):
        assert default in assumptions


def test_options_given_by_the_client_are_not_listed_as_assumptions(check):
    options = {"min_clearance": 1.0, "flush_tolerance": 0.3, "max_protrusion": 1.0, "max_recess": 2.0,
               "dynamic_allowance": 0.2, "torque": 28, "lubrication": "dry"}  # torque, lubrication: thread_strength's
    head = dict(FLUSH_HEAD, material="aluminium", peak_pressure=60, plug_inclination=10)
    # What is left is the model's, not a default: the crown is taken as flat.
    (crown,) = check(FLUSH_PLUG, head, options).assumptions
    assert crown.startswith("piston: the crown is taken as flat and square to the cylinder axis")
