"""The non-geometric checks, NOT_CHECKED and `require`, and the verdict rule.

Socket outside diameters come from seed_catalog/hexes.csv (across-corners of the hex's
form, exact geometry, plus 2 x 2.0 mm thin wall, common practice); torque ranges from
seed_catalog/torques.csv (common practice, reference-values.md).
"""
from __future__ import annotations

import pytest

from service.fitment import verdict_of
from service.fitment.model import Finding

from .test_fit_geometry import FLUSH_HEAD, FLUSH_PLUG


def by_code(result, code):
    return [f for f in result.findings if f.code == code]


def not_checked(result):
    return {f.check: f for f in result.findings if f.code == "NOT_CHECKED"}


def test_a_16_mm_socket_does_not_pass_a_22_mm_well(check):
    """16 mm across flats -> 16 / cos 30° = 18.475 mm across corners + 4.0 mm wall = 22.475 mm."""
    result = check(dict(FLUSH_PLUG, hex=16), dict(FLUSH_HEAD, well_bore=22.0))
    (finding,) = by_code(result, "TOOL_CLEARANCE")
    assert finding.values["socket_od"][0] == pytest.approx(22.475, abs=1e-3)
    assert finding.values["interference"][0] == pytest.approx(0.475, abs=1e-3)
    assert result.verdict == "fail"


def test_a_14_mm_socket_passes_the_same_well(check):
    """14 mm across flats, twelve-point -> 14 / cos 15° = 14.494 + 4.0 = 18.494 mm, inside 22.0 mm."""
    result = check(dict(FLUSH_PLUG, hex=14), dict(FLUSH_HEAD, well_bore=22.0))
    assert by_code(result, "TOOL_CLEARANCE") == []
    assert "tool_clearance" not in not_checked(result)


def test_five_eighths_inch_and_16_mm_are_one_hex_family(check):
    """5/8 in = 15.875 mm exactly (NIST SP 811); the trade treats it as 16 mm."""
    result = check(dict(FLUSH_PLUG, hex="5/8 in"), dict(FLUSH_HEAD, hex=16))
    assert by_code(result, "HEX_DIFFERS") == []


def test_a_20_8_mm_hex_in_a_head_tooled_for_16_mm_is_noted_but_passes(check):
    result = check(dict(FLUSH_PLUG, hex=20.8), dict(FLUSH_HEAD, hex=16))
    (finding,) = by_code(result, "HEX_DIFFERS")
    assert finding.severity == "info"
    assert result.verdict == "pass"


def test_a_plug_without_resistor_in_a_head_that_requires_one_warns(check):
    result = check(dict(FLUSH_PLUG, resistor=False), dict(FLUSH_HEAD, resistor_required=True))
    assert [f.severity for f in by_code(result, "RESISTOR_REQUIRED")] == ["warn"]
    assert result.verdict == "warn"


def test_a_resistor_plug_satisfies_the_requirement(check):
    result = check(dict(FLUSH_PLUG, resistor=True), dict(FLUSH_HEAD, resistor_required=True))
    assert by_code(result, "RESISTOR_REQUIRED") == [] and "resistor" not in not_checked(result)


def test_torque_guidance_for_m14_flat_in_aluminium_is_25_to_30_newton_metres(check):
    """reference-values.md, common practice: flat M14, aluminium 25-30 N·m; new gasket 1/2 turn."""
    result = check(FLUSH_PLUG, dict(FLUSH_HEAD, material="aluminium"))
    assert (result.torque.min_nm, result.torque.max_nm) == (25.0, 30.0)
    assert result.torque.turn_angle_deg == 180.0


def test_a_planned_torque_given_in_foot_pounds_above_the_range_warns(check):
    """30 lbf·ft = 30 x 1.355818 = 40.67 N·m (NIST SP 811), above 30 N·m."""
    result = check(FLUSH_PLUG, dict(FLUSH_HEAD, material="aluminium"), {"torque": "30 ft-lb"})
    (finding,) = by_code(result, "TORQUE_OUT_OF_RANGE")
    assert finding.values["planned"][0] == pytest.approx(40.675, abs=1e-3)
    assert "above" in finding.message


def test_a_planned_torque_inside_the_range_raises_nothing(check):
    result = check(FLUSH_PLUG, dict(FLUSH_HEAD, material="cast_iron"), {"torque": 30})
    assert by_code(result, "TORQUE_OUT_OF_RANGE") == []


def test_missing_data_is_reported_as_not_checked_never_as_a_silent_pass(check):
    plug = {"thread": "M14x1.25", "seat": "flat"}
    result = check(plug, {"thread": "M14x1.25", "seat": "flat"})
    skipped = not_checked(result)
    assert {"reach", "piston", "valve", "tool_clearance", "hex", "resistor"} <= set(skipped)
    assert "reach" in skipped["reach"].message
    assert result.verdict == "pass"
    assert result.geometry == {}


def test_a_required_check_that_cannot_run_fails_the_fit(check):
    result = check(FLUSH_PLUG, FLUSH_HEAD, {"require": ["valve"]})
    assert not_checked(result)["valve"].severity == "fail"
    assert result.verdict == "fail"


@pytest.mark.parametrize(("severities", "verdict"), [
    ((), "pass"), (("info",), "pass"), (("info", "warn"), "warn"),
    (("warn", "fail", "info"), "fail"), (("fail",), "fail")])
def test_the_verdict_is_the_worst_severity_present(severities, verdict):
    findings = [Finding("X", "x", severity, "") for severity in severities]
    assert verdict_of(findings) == verdict
