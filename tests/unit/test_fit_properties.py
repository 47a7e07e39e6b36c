"""Invariants of the engine over generated plugs and ports (hypothesis)."""
from __future__ import annotations

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from service.fitment import check_fit, verdict_of
from service.fitment.model import Dim, Options, PlugSpec, PortSpec

# Plausible M14 flat-seat dimensions in mm (ranges from reference-values.md's common
# reaches 9.5-26.5 mm and installed gaskets 1.0-1.5 mm, widened a little).
reaches = st.floats(8.0, 28.0, allow_nan=False)
gaskets = st.floats(0.8, 2.0, allow_nan=False)
firing_ends = st.floats(-2.0, 8.0, allow_nan=False)
depths = st.floats(8.0, 28.0, allow_nan=False)
clearances = st.floats(0.0, 15.0, allow_nan=False)
tolerances = st.floats(0.0, 0.5, allow_nan=False)
torques = st.floats(5.0, 50.0, allow_nan=False)

SETTINGS = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])


def _in_inches(mm: float) -> str:
    return f"{mm / 25.4!r} in"


@SETTINGS
@given(reach=reaches, gasket=gaskets, firing_end=firing_ends, depth=depths, clearance=clearances,
       reach_tol=tolerances, torque=torques)
def test_giving_the_inputs_in_inches_never_changes_the_verdict(check, reach, gasket, firing_end, depth,
                                                               clearance, reach_tol, torque):
    plug = {"thread": "M14x1.25", "seat": "flat", "reach": {"value": reach, "tol": reach_tol},
            "gasket_thickness": gasket, "firing_end": firing_end}
    head = {"thread": "M14x1.25", "seat": "flat", "port_depth": depth, "piston_clearance": clearance}
    plug_in = {"thread": "M14x1.25", "seat": "flat",
               "reach": {"value": reach / 25.4, "unit": "in", "tol": reach_tol / 25.4},
               "gasket_thickness": _in_inches(gasket), "firing_end": _in_inches(firing_end)}
    head_in = {"thread": "M14x1.25", "seat": "flat", "port_depth": _in_inches(depth),
               "piston_clearance": _in_inches(clearance)}
    metric = check(plug, head, {"torque": torque})
    imperial = check(plug_in, head_in, {"torque": f"{torque / 1.3558179483314004!r} lbf*ft"})
    assert metric.verdict == imperial.verdict
    assert [f.code for f in metric.findings] == [f.code for f in imperial.findings]


@SETTINGS
@given(reach=reaches, gasket=gaskets, firing_end=firing_ends, depth=depths, clearance=clearances,
       extra=st.floats(0.0, 20.0, allow_nan=False))
def test_more_piston_clearance_never_turns_a_pass_into_a_fail(check, reach, gasket, firing_end, depth,
                                                              clearance, extra):
    plug = {"thread": "M14x1.25", "seat": "flat", "reach": reach, "gasket_thickness": gasket,
            "firing_end": firing_end}
    head = {"thread": "M14x1.25", "seat": "flat", "port_depth": depth, "piston_clearance": clearance}
    before = check(plug, head)
    after = check(plug, dict(head, piston_clearance=clearance + extra))
    if before.verdict == "pass":
        assert after.verdict == "pass"
    assert after.geometry["piston_margin"].min >= before.geometry["piston_margin"].min


@SETTINGS
@given(reach=reaches, gasket=gaskets, firing_end=firing_ends, depth=depths, clearance=clearances,
       seat=st.sampled_from(["flat", "conical"]), thread=st.sampled_from(["M14x1.25", "M12x1.25"]),
       well=st.floats(15.0, 30.0), hex_af=st.sampled_from([14, 16, 20.8]), resistor=st.booleans())
def test_the_verdict_is_always_the_worst_severity_among_the_findings(check, reach, gasket, firing_end, depth,
                                                                     clearance, seat, thread, well, hex_af,
                                                                     resistor):
    plug = {"thread": thread, "seat": seat, "reach": reach, "firing_end": firing_end, "hex": hex_af,
            "resistor": resistor}
    if seat == "flat":
        plug["gasket_thickness"] = gasket
    head = {"thread": "M14x1.25", "seat": "flat", "port_depth": depth, "piston_clearance": clearance,
            "well_bore": well, "resistor_required": True}
    result = check(plug, head)
    rank = {"info": 0, "warn": 1, "fail": 2}
    worst = max((rank[f.severity] for f in result.findings), default=0)
    assert result.verdict == ("pass", "warn", "fail")[worst]
    assert result.verdict == verdict_of(result.findings)


# --- the reach policy and the off-axis clearance (issue 11), on the engine's own records ---

def toleranced(nominals):
    return st.tuples(nominals, tolerances, tolerances).map(lambda parts: Dim(*parts))


exact_or_toleranced = toleranced(st.floats(8.0, 28.0, allow_nan=False))
inclinations = st.one_of(st.none(), st.floats(0.0, 75.0, allow_nan=False))
stacks = st.sampled_from(["worst_case", "rss"])


@SETTINGS
@given(reach=exact_or_toleranced, gasket=toleranced(gaskets), depth=depths,
       incline=st.floats(0.0, 4.0, allow_nan=False), stack=stacks, low=st.floats(0.0, 8.0, allow_nan=False),
       raise_by=st.floats(0.0, 8.0, allow_nan=False), thread=st.sampled_from(["M14x1.25", "M18x1.5", "M10x1"]))
def test_raising_max_protrusion_never_turns_a_pass_into_a_fail(catalog, reach, gasket, depth, incline, stack, low,
                                                               raise_by, thread):
    plug = PlugSpec(thread, "flat", reach=reach, gasket_thickness=gasket)
    port = PortSpec(thread, "flat", port_depth=Dim(depth), port_depth_long_side=Dim(depth + incline))
    rank = {"pass": 0, "warn": 1, "fail": 2}
    before = check_fit(plug, port, Options(stack=stack, max_protrusion=low), catalog)
    after = check_fit(plug, port, Options(stack=stack, max_protrusion=low + raise_by), catalog)
    assert rank[after.verdict] <= rank[before.verdict]
    if before.verdict == "pass":
        assert after.verdict == "pass"


@SETTINGS
@given(depth=depths, incline=st.floats(0.3, 6.0, allow_nan=False), where=st.floats(0.0, 1.0),
       tol=st.floats(0.0, 0.3, allow_nan=False), stack=stacks, flush=st.sampled_from([None, 0.0, 0.25, 1.0]))
def test_a_thread_end_between_the_break_outs_of_an_inclined_roof_never_gives_a_reach_finding(
        catalog, depth, incline, where, tol, stack, flush):
    """Whatever the flush tolerance: the thread end's whole tolerance band lies between
    the short side (D) and the long side (D + incline)."""
    span = incline - 2 * tol
    if span < 0:
        return
    end = depth + tol + where * span
    plug = PlugSpec("M14x1.25", "flat", reach=Dim(end + 1.5, tol, tol), gasket_thickness=Dim(1.5))
    port = PortSpec("M14x1.25", "flat", port_depth=Dim(depth), port_depth_long_side=Dim(depth + incline))
    result = check_fit(plug, port, Options(stack=stack, flush_tolerance=flush), catalog)
    assert not {"REACH_LONG", "REACH_SHORT"} & set(result.codes())


@SETTINGS
@given(reach=exact_or_toleranced, firing_end=toleranced(firing_ends),
       depth=depths, clearance=toleranced(clearances), inclination=inclinations,
       stack=stacks, allowance=st.sampled_from([None, 0.0, 0.4]))
def test_the_tip_only_margin_is_never_smaller_than_the_governing_margin(catalog, reach, firing_end, depth, clearance,
                                                                        inclination, stack, allowance):
    plug = PlugSpec("M14x1.25", "flat", reach=reach, gasket_thickness=Dim(1.5), firing_end=firing_end)
    port = PortSpec("M14x1.25", "flat", port_depth=Dim(depth), piston_clearance=clearance,
                    plug_inclination_deg=inclination)
    ctx_options = Options(stack=stack, dynamic_allowance=allowance)
    result = check_fit(plug, port, ctx_options, catalog)
    governing = result.geometry["piston_margin"]
    # The tip alone, O - t - a, with all its bounds: the engine's valve margin, given the
    # same obstacle distance as a valve (a valve's margin counts the tip only).
    tip_only = check_fit(plug, PortSpec("M14x1.25", "flat", port_depth=Dim(depth), seat_to_valve=Dim(
        depth + clearance.nominal, clearance.plus, clearance.minus)), ctx_options, catalog)
    assert all(tip >= low - 1e-9 for tip, low in zip(tip_only.geometry["valve_margin"], governing, strict=True))
    assert result.analysis["piston"]["tip_margin"][0] >= (governing.rss_min if stack == "rss" else governing.min)
