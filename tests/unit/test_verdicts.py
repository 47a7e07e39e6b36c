"""Verdicts an engine builder would sign (issue 11): each case as a new user met it, with
the published or hand-derived figure it is checked against named beside it.

Reach classes: Irish Standard I.S. 34:1954 (S.I. No. 19/1954) gives 14 mm plugs a reach
of 0.500 ± 0.010 in or 0.750 ± 0.010 in, that is 12.70 ± 0.254 mm and 19.05 ± 0.254 mm
(1 in = 25.4 mm exactly, NIST SP 811). Pitches: ISO 261 / ISO 68-1 (M14x1.25: 1.25 mm,
M18x1.5: 1.5 mm). The M14 standard installed gasket, 1.5 mm, is common practice
(seed_catalog/threads.csv); every case below gives its gasket explicitly.
"""
from __future__ import annotations

import math

import pytest

from service.fitment import check_fit
from service.fitment.model import Dim, Options, PlugSpec, PortSpec

HALF_INCH = Dim(12.70, 0.254, 0.254)  # I.S. 34:1954: 0.500 ± 0.010 in
THREE_QUARTER_INCH = Dim(19.05, 0.254, 0.254)  # I.S. 34:1954: 0.750 ± 0.010 in
GASKET = Dim(1.5)  # common practice, installed M14 gasket


def plug(reach: Dim, firing_end: float | None = 3.0, **more) -> PlugSpec:
    return PlugSpec("M14x1.25", "flat", reach=reach, gasket_thickness=more.pop("gasket_thickness", GASKET),
                    firing_end=None if firing_end is None else Dim(firing_end), **more)


def port_for(reach_class: Dim, **more) -> PortSpec:
    """A port made for a reach class: its depth is the reach less the installed gasket."""
    return PortSpec("M14x1.25", "flat", port_depth=Dim(reach_class.nominal - GASKET.nominal), **more)


def findings(result, code):
    return [f for f in result.findings if f.code == code]


# --- 1 and 2: the wrong reach class is the wrong plug ----------------------------------------


def test_a_three_quarter_inch_plug_in_a_half_inch_port_fails_without_any_piston_data(catalog):
    """Protrusion 19.05 - 12.70 = 6.35 mm nominal, 6.604 mm at worst (+0.254 reach): five
    pitches of M14x1.25 stand in the chamber, against a default limit of one (1.25 mm)."""
    result = check_fit(plug(THREE_QUARTER_INCH), port_for(HALF_INCH), None, catalog)
    (long,) = findings(result, "REACH_LONG")
    assert result.verdict == "fail" and long.severity == "fail"
    assert long.values["distance"][0] == pytest.approx(6.604)
    assert long.values["limit"][0] == pytest.approx(1.25)
    assert "pre-ignite" in long.message and "pull the head's threads" in long.message
    # the reach that fits flush: the port's own class, 11.20 + 1.5 = 12.70 mm
    assert long.values["fitting_reach_min"][0] == pytest.approx(12.70)


def test_ample_piston_clearance_does_not_excuse_the_long_reach(catalog):
    result = check_fit(plug(THREE_QUARTER_INCH), port_for(HALF_INCH, piston_clearance=Dim(40.0)), None, catalog)
    assert findings(result, "PISTON_CONTACT") == [] and result.verdict == "fail"


def test_a_half_inch_plug_in_a_three_quarter_inch_port_fails_as_the_wrong_reach(catalog):
    """Thread end 6.35 mm short of the chamber nominal, 6.604 mm at worst (-0.254 reach),
    against a default limit of two pitches (2.5 mm)."""
    result = check_fit(plug(HALF_INCH), port_for(THREE_QUARTER_INCH), None, catalog)
    (short,) = findings(result, "REACH_SHORT")
    assert result.verdict == "fail" and short.severity == "fail"
    assert short.values["distance"][0] == pytest.approx(6.604)
    assert short.values["limit"][0] == pytest.approx(2.5)
    assert "shrouded" in short.message


@pytest.mark.parametrize("thread, pitch, protrusion, severity", [
    ("M14x1.25", 1.25, 1.2, "warn"), ("M14x1.25", 1.25, 1.3, "fail"),
    ("M18x1.5", 1.5, 1.3, "warn"), ("M18x1.5", 1.5, 1.55, "fail"),
])
def test_the_default_max_protrusion_is_one_pitch_of_the_ports_thread(catalog, thread, pitch, protrusion, severity):
    """ISO 68-1 pitches: M14x1.25 has P = 1.25 mm, M18x1.5 has P = 1.5 mm."""
    shell = PlugSpec(thread, "flat", reach=Dim(17.5 + 1.5 + protrusion), gasket_thickness=GASKET)
    result = check_fit(shell, PortSpec(thread, "flat", port_depth=Dim(17.5)), None, catalog)
    (long,) = findings(result, "REACH_LONG")
    assert long.severity == severity and long.values["limit"][0] == pytest.approx(pitch)
    assert any(text.startswith(f"max_protrusion not given: {pitch:g} mm used") for text in result.assumptions)


def test_the_default_max_recess_is_two_pitches(catalog):
    """M14x1.25: 2 x 1.25 = 2.5 mm (ISO 68-1 pitch); 2.4 mm short warns, 2.6 mm fails."""
    port = PortSpec("M14x1.25", "flat", port_depth=Dim(17.5))
    severities = [findings(check_fit(plug(Dim(19.0 - short)), port, None, catalog), "REACH_SHORT")[0].severity
                  for short in (2.4, 2.6)]
    assert severities == ["warn", "fail"]


def test_a_client_may_set_the_fail_limits(catalog):
    port = PortSpec("M14x1.25", "flat", port_depth=Dim(17.5))
    result = check_fit(plug(Dim(20.0)), port, Options(max_protrusion=0.8), catalog)  # 1.0 mm proud
    assert findings(result, "REACH_LONG")[0].severity == "fail"
    assert not any(text.startswith("max_protrusion not given") for text in result.assumptions)


# --- 3: an inclined roof -------------------------------------------------------------------


@pytest.mark.parametrize("reach", [19.0, 19.5, 20.0, 20.5, 21.0])
def test_every_reach_that_ends_between_the_break_outs_of_an_inclined_roof_passes(catalog, reach):
    """Short side 17.5, long side 19.5 (the issue's port): thread ends from 17.5 to 19.5 mm
    (reach 19.0 to 21.0 with the 1.5 mm gasket) are how a plug sits in such a port."""
    port = PortSpec("M14x1.25", "flat", port_depth=Dim(17.5), port_depth_long_side=Dim(19.5))
    result = check_fit(plug(Dim(reach)), port, None, catalog)
    assert result.verdict == "pass"
    (roof,) = findings(result, "REACH_INCLINED_ROOF")
    assert roof.severity == "info"
    assert roof.values["short_side"][0] == pytest.approx(reach - 19.0)
    assert roof.values["long_side"][0] == pytest.approx(21.0 - reach)
    assert "shorter" not in roof.message and "longer" not in roof.message


def test_an_inclined_roof_still_fails_a_plug_that_stands_in_all_round(catalog):
    """Thread end 19.5 + 1.5 = 21.0 mm: 1.5 mm past the long side, more than one pitch;
    the reaches that fit run from 17.5 + 1.5 = 19.0 to 19.5 + 1.5 = 21.0 mm."""
    port = PortSpec("M14x1.25", "flat", port_depth=Dim(17.5), port_depth_long_side=Dim(19.5))
    (long,) = findings(check_fit(plug(Dim(22.5)), port, None, catalog), "REACH_LONG")
    assert long.severity == "fail" and long.values["distance"][0] == pytest.approx(1.5)
    assert (long.values["fitting_reach_min"][0], long.values["fitting_reach_max"][0]) == (
        pytest.approx(19.0), pytest.approx(21.0))
    assert "between the two break-outs" in long.message


# --- 4: off-axis clearance -----------------------------------------------------------------


def test_the_low_edge_of_an_inclined_shell_reaches_the_crown_before_the_tip(catalog):
    """Derived by hand. The plug leans θ = 30° from the cylinder axis; the crown is flat and
    square to the cylinder axis. Measured along the plug axis, the crown lies at O from
    the seat face where the axis meets it; a point r off the axis on the low side meets the
    crown r·tan θ sooner. The shell's thread end (radius r = 14/2 = 7 mm, M14) at
    e = 17.55 mm therefore has a margin O - e - r·tan θ, the tip at t = 20.55 mm has O - t.

        r·tan θ = 7 × tan 30° = 7 × 0.577350 = 4.041452 mm
        O = 17.55 + 5.0 = 22.55 mm (port depth 17.55, piston clearance 5.0)
        tip margin        = 22.55 - 20.55            = 2.000000 mm  (passes 1.5 mm)
        shell-edge margin = 22.55 - 17.55 - 4.041452 = 0.958548 mm  (fails 1.5 mm)

    The edge is 4.041452 - 3.0 = 1.04 mm nearer than the tip: the verdict is a fail, on
    the shell edge."""
    shell = plug(Dim(19.05), firing_end=3.0)  # e = 19.05 - 1.5 = 17.55, t = 20.55
    port = PortSpec("M14x1.25", "flat", port_depth=Dim(17.55), piston_clearance=Dim(5.0), plug_inclination_deg=30.0)
    result = check_fit(shell, port, None, catalog)
    assert 7 * math.tan(math.radians(30)) == pytest.approx(4.041452, abs=1e-6)
    piston = result.analysis["piston"]
    assert piston["governing_feature"] == "shell_edge"
    assert piston["tip_margin"][0] == pytest.approx(2.0)
    assert piston["shell_edge_margin"][0] == pytest.approx(0.958548, abs=1e-6)
    assert piston["shell_edge_offset"][0] == pytest.approx(4.041452, abs=1e-6)
    assert result.geometry["piston_margin"].min == pytest.approx(0.958548, abs=1e-6)
    (contact,) = findings(result, "PISTON_CONTACT")
    assert contact.severity == "fail" and "low edge of the plug's shell" in contact.message
    assert contact.values["inclination"] == (30.0, "angle")


def test_without_an_inclination_the_assumptions_say_zero_and_a_flat_crown(catalog):
    port = PortSpec("M14x1.25", "flat", port_depth=Dim(17.5), piston_clearance=Dim(8.0))
    result = check_fit(plug(Dim(19.0)), port, None, catalog)
    text = " | ".join(result.assumptions)
    assert "plug_inclination not given: 0 deg assumed" in text and "crown is taken as flat" in text
    assert result.analysis["piston"]["governing_feature"] == "tip"


# --- 5 and 6: gaskets and washers ----------------------------------------------------------


def test_a_flat_seat_plug_with_a_zero_gasket_warns(catalog):
    """Reach 17.5 with no gasket ends at 17.5 = D: flush, yet with no seal and no heat path."""
    port = PortSpec("M14x1.25", "flat", port_depth=Dim(17.5))
    result = check_fit(plug(Dim(17.5), gasket_thickness=Dim(0.0)), port, None, catalog)
    (missing,) = findings(result, "GASKET_MISSING")
    assert missing.severity == "warn" and result.verdict == "warn"
    assert "no seal" in missing.message and "heat path" in missing.message


def test_a_reused_gasket_sits_thinner_and_takes_the_reused_turn_angle(catalog):
    """A re-used gasket is tightened 1/12 turn (30°, common practice) instead of 1/2 turn:
    on M14x1.25 that turn moves the plug 1.25 x 30/360 = 0.104167 mm further in."""
    port = PortSpec("M14x1.25", "flat", port_depth=Dim(17.5), material="aluminium")
    new = check_fit(plug(Dim(19.0)), port, None, catalog)
    reused = check_fit(plug(Dim(19.0)), port, Options(gasket_condition="reused"), catalog)
    moved = reused.geometry["protrusion_short_side"].nominal - new.geometry["protrusion_short_side"].nominal
    assert moved == pytest.approx(1.25 * 30 / 360)
    # seed_catalog/torques.csv (common practice): 1/2 turn new, 1/12 turn (30 deg) re-used
    assert (reused.torque.turn_angle_deg, reused.torque.reused_gasket_turn_angle_deg) == (180.0, 30.0)
    (note,) = [text for text in reused.assumptions if text.startswith("gasket_condition reused")]
    assert note.startswith("gasket_condition reused: the gasket is taken 0.104 mm thinner")
    assert "tighten it by the re-used gasket's turn angle" in note


def test_an_indexing_washer_moves_the_plug_out_and_is_noted(catalog):
    """A 1.0 mm washer under a flush plug: the thread end moves from 17.5 to 16.5 mm, 1.0 mm
    short of the chamber: REACH_SHORT warns (past 0.5, inside 2.5 mm)."""
    port = PortSpec("M14x1.25", "flat", port_depth=Dim(17.5))
    result = check_fit(plug(Dim(19.0)), port, Options(indexing_washer=1.0), catalog)
    assert result.geometry["protrusion_short_side"].nominal == pytest.approx(-1.0)
    (washer,) = findings(result, "INDEXING_WASHER")
    assert washer.severity == "info" and "heat path" in washer.message
    assert findings(result, "REACH_SHORT")[0].severity == "warn"


# --- 7: wording, and geometry that cannot exist --------------------------------------------


@pytest.mark.parametrize("thread, sentence", [
    ("M12x1.25", "is smaller than the port's M14x1.25: it does not engage the head's thread at all"),
    ("M18x1.5", "is larger than the port's M14x1.25: it does not start in the port"),
    ("M14x1.5", "has another pitch than the port's M14x1.25: it starts, then cross-threads"),
])
def test_each_thread_mismatch_says_what_happens(catalog, thread, sentence):
    result = check_fit(PlugSpec(thread, "flat", reach=Dim(19.0)), PortSpec("M14x1.25", "flat", port_depth=Dim(17.5)),
                       None, catalog)
    (mismatch,) = findings(result, "THREAD_MISMATCH")
    assert sentence in mismatch.message


def test_a_seat_mismatch_gives_no_protrusion_or_torque_and_says_why(catalog):
    conical = PlugSpec("M14x1.25", "conical", reach=Dim(17.5), firing_end=Dim(3.0))
    port = PortSpec("M14x1.25", "flat", port_depth=Dim(17.5), piston_clearance=Dim(8.0), material="aluminium")
    result = check_fit(conical, port, None, catalog)
    assert result.codes() == ["SEAT_MISMATCH"] + [c for c in result.codes()[1:] if c == "NOT_CHECKED"]
    assert result.geometry == {} and result.torque is None and "piston" not in result.analysis
    assert any("cannot be installed" in text for text in result.assumptions)


# --- 8: cautions in the messages that give guidance ----------------------------------------


def test_reach_and_torque_messages_carry_the_caution(catalog):
    port = PortSpec("M14x1.25", "flat", port_depth=Dim(17.5), material="aluminium")
    result = check_fit(plug(Dim(20.0)), port, Options(torque=40.0), catalog)
    for code in ("REACH_LONG", "TORQUE_OUT_OF_RANGE"):
        assert findings(result, code)[0].message.endswith("the engine maker's data comes first.")
