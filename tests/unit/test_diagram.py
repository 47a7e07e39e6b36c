"""The fit drawing: valid SVG, positions along the axis to scale, findings and cautions shown.

Positions are checked against hand-worked contract geometry (fit-check-contract.md):
e = reach − s, t = e + firing_end, piston at port depth + piston clearance.
"""
from __future__ import annotations

import math
import xml.etree.ElementTree as ET

import cairosvg
import pytest

from service.fitment import check_fit
from service.fitment.catalog import Catalog, ThreadSize
from service.fitment.model import Dim, Options, PlugSpec, PortSpec
from service.formats.drawing import render_fit_svg

SVG = "{http://www.w3.org/2000/svg}"

# A catalogue built in memory; the 1.5 mm gasket is common practice (reference-values.md:
# installed gasket 1.0–1.5 mm), only used where a test leaves the gasket out.
CATALOG = Catalog(version="test", threads={
    "M14x1.25": ThreadSize("M14x1.25", 14.0, 1.25, frozenset({"flat", "conical"}), 1.5, "common practice"),
})

LONG_PLUG = PlugSpec(thread="M14x1.25", seat="flat", reach=Dim(19.0, 0.25, 0.25), gasket_thickness=Dim(1.5),
                     firing_end=Dim(3.0), hex=16.0, gap=0.8)
DEEP_PORT = PortSpec(thread="M14x1.25", seat="flat", port_depth=Dim(17.0), port_depth_long_side=Dim(19.5),
                     piston_clearance=Dim(4.0), seat_to_valve=Dim(21.5))


def _render(plug=LONG_PLUG, port=DEEP_PORT, units="metric", options=None):
    result = check_fit(plug, port, options, CATALOG)
    return result, render_fit_svg(plug, port, result, units, catalog=CATALOG)


def _features(root: ET.Element) -> dict[str, ET.Element]:
    return {element.get("data-feature"): element for element in root.iter() if element.get("data-feature")}


def test_every_feature_is_drawn_at_its_axial_position_to_one_scale():
    _, svg = _render()
    root = ET.fromstring(svg.encode())
    scale = float(root.get("data-px-per-mm"))
    origin = float(root.get("data-origin-y"))
    features = _features(root)
    # hand-worked (contract geometry): e = 19.0 − 1.5 = 17.5, t = 17.5 + 3.0 = 20.5,
    # piston at 17.0 + 4.0 = 21.0, valve at 21.5, gasket top at −1.5
    expected = {"seat_face": 0.0, "gasket_top": -1.5, "port_depth": 17.0, "port_depth_long": 19.5,
                "thread_end": 17.5, "tip": 20.5, "piston_crown": 21.0, "valve": 21.5}
    for name, axial_mm in expected.items():
        element = features[name]
        assert float(element.get("data-axial-mm")) == pytest.approx(axial_mm), name
        assert float(element.get("y1")) == pytest.approx(origin + axial_mm * scale, abs=0.01), name


def test_the_piston_margin_on_the_drawing_measures_what_the_engine_computed():
    result, svg = _render()
    root = ET.fromstring(svg.encode())
    scale = float(root.get("data-px-per-mm"))
    features = _features(root)
    drawn_mm = (float(features["piston_crown"].get("y1")) - float(features["tip"].get("y1"))) / scale
    # hand-worked: 21.0 − 20.5 = 0.5 mm, and the engine's nominal margin (no dynamic allowance)
    assert drawn_mm == pytest.approx(0.5, abs=0.01)
    assert drawn_mm == pytest.approx(result.geometry["piston_margin"].nominal, abs=0.01)


def test_the_drawing_marks_the_point_nearest_the_piston_and_leans_the_crown_with_the_plug():
    """Hand-worked (contract geometry, θ = 30°): e = 19.05 − 1.5 = 17.55, t = 20.55,
    O = 17.55 + 5.0 = 22.55 at the plug axis. A crown square to the cylinder axis meets
    the line r = 7 mm off the axis r·tan θ = 4.041 mm sooner, at 18.509 mm: the shell's
    low edge (at 17.55) is 0.959 mm from it, the tip 2.0 mm. The edge governs."""
    plug = PlugSpec(thread="M14x1.25", seat="flat", reach=Dim(19.05), gasket_thickness=Dim(1.5),
                    firing_end=Dim(3.0))
    port = PortSpec(thread="M14x1.25", seat="flat", port_depth=Dim(17.55), piston_clearance=Dim(5.0),
                    plug_inclination_deg=30.0)
    result, svg = _render(plug, port)
    root = ET.fromstring(svg.encode())
    scale, origin, axis = (float(root.get(name)) for name in ("data-px-per-mm", "data-origin-y", "data-axis-x"))
    point = _features(root)["piston_governing_point"]
    assert point.get("data-governing") == "shell_edge" == result.analysis["piston"]["governing_feature"]
    assert float(point.get("cx")) == pytest.approx(axis - 7.0 * scale, abs=0.01)
    assert float(point.get("cy")) == pytest.approx(origin + 17.55 * scale, abs=0.01)
    crown = _features(root)["piston_crown"]
    x1, y1, x2, y2 = (float(crown.get(name)) for name in ("x1", "y1", "x2", "y2"))
    at_edge = y1 + (y2 - y1) * ((axis - 7.0 * scale) - x1) / (x2 - x1)  # the crown's line at x = -r
    assert (at_edge - origin) / scale == pytest.approx(22.55 - 7.0 * math.tan(math.radians(30.0)), abs=0.01)
    dimension = next(e for e in root.iter() if e.get("data-dimension") == "piston_margin")
    drawn = abs(float(dimension.get("y2")) - float(dimension.get("y1"))) / scale
    assert drawn == pytest.approx(0.9585, abs=0.01) == pytest.approx(result.geometry["piston_margin"].nominal, abs=0.01)
    text = "".join(root.itertext())
    assert "nearest the piston: shell edge" in text


def test_without_an_inclination_the_tip_is_the_point_nearest_the_piston():
    _, svg = _render()
    point = _features(ET.fromstring(svg.encode()))["piston_governing_point"]
    assert point.get("data-governing") == "tip" and float(point.get("data-axial-mm")) == pytest.approx(20.5)


def test_the_scale_bar_is_five_millimetres_long_in_metric_and_a_quarter_inch_in_imperial():
    for units, length_mm in (("metric", 5.0), ("imperial", 6.35)):  # 1/4 in = 6.35 mm (NIST SP 811)
        _, svg = _render(units=units)
        root = ET.fromstring(svg.encode())
        bar = next(e for e in root.iter(f"{SVG}rect") if e.get("data-scale-bar-mm"))
        assert float(bar.get("width")) == pytest.approx(length_mm * float(root.get("data-px-per-mm")), abs=0.01)


def test_margins_are_labelled_in_the_requested_units():
    _, metric = _render()
    _, imperial = _render(units="imperial")
    # hand-worked: piston margin 0.5 mm = 0.020 in (1 in = 25.4 mm, NIST SP 811)
    assert "piston margin 0.50 mm" in metric
    assert "piston margin 0.020 in" in imperial
    assert " mm" not in imperial.split("Findings")[0].replace("px per mm", "")


def test_findings_are_marked_by_severity_with_a_legend_and_the_caution():
    result, svg = _render()
    # e = 17.5 lies between the break-outs (17.0 and 19.5) of DEEP_PORT's inclined roof.
    assert "PISTON_CONTACT" in result.codes() and "REACH_INCLINED_ROOF" in result.codes()
    text = "".join(ET.fromstring(svg.encode()).itertext())
    assert "FAIL  PISTON_CONTACT  (piston)" in text
    assert "INFO  REACH_INCLINED_ROOF  (reach)" in text
    assert "engine maker's service data, local regulations and licensed practice come first" in text


def test_a_client_string_cannot_break_the_markup():
    plug = PlugSpec(thread="M14x1.25<script>", seat="flat")
    result = check_fit(plug, DEEP_PORT, None, CATALOG)
    svg = render_fit_svg(plug, DEEP_PORT, result, catalog=CATALOG)
    root = ET.fromstring(svg.encode())  # would raise on broken markup
    assert not list(root.iter(f"{SVG}script"))


@pytest.mark.parametrize("plug, port", [
    (LONG_PLUG, DEEP_PORT),
    (PlugSpec(thread="M14x1.25", seat="conical", reach=Dim(11.7), firing_end=Dim(-0.5)),
     PortSpec(thread="M14x1.25", seat="conical", design_reach=Dim(11.7), seat_to_piston=Dim(16.0))),
    (PlugSpec(thread="M14x1.25", seat="flat"), PortSpec(thread="M14x1.25", seat="flat")),
])
def test_the_drawing_renders_to_a_png(plug, port):
    result = check_fit(plug, port, Options(), CATALOG)
    png = cairosvg.svg2png(bytestring=render_fit_svg(plug, port, result, catalog=CATALOG).encode())
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    assert len(png) > 5000


def test_a_running_allowance_draws_the_crown_at_speed_and_the_margin_to_it():
    """Hand-worked: the tip at 19.0 − 1.5 + 3.0 = 20.5 mm, the crown at rest at 17.0 + 8.0 =
    25.0 mm (port depth plus piston clearance). A steel rod at 7,000 rpm (tests/unit/
    test_running.py: 0.199 mm) brings the crown to 24.801 mm; the margin drawn is
    24.801 − 20.5 = 4.301 mm, the engine's nominal piston margin."""
    port = PortSpec(thread="M14x1.25", seat="flat", port_depth=Dim(17.0), piston_clearance=Dim(8.0),
                    stroke_mm=86.0, rod_length_mm=145.0, max_rpm=7000.0, rod_material="steel",
                    reciprocating_mass_g=600.0, rod_section_area_mm2=150.0)
    result, svg = _render(port=port)
    root = ET.fromstring(svg.encode())
    scale = float(root.get("data-px-per-mm"))
    features = _features(root)
    assert float(features["piston_crown_at_speed"].get("data-axial-mm")) == pytest.approx(25.0 - 0.199, abs=0.001)
    dimension = next(e for e in root.iter() if e.get("data-dimension") == "piston_margin")
    drawn = abs(float(dimension.get("y2")) - float(dimension.get("y1"))) / scale
    assert drawn == pytest.approx(result.geometry["piston_margin"].nominal, abs=0.01)
    assert drawn == pytest.approx(4.301, abs=0.01)
    text = " ".join(element.text or "" for element in root.iter(f"{SVG}text"))
    assert "to the crown at speed: 0.20 mm allowance off" in text
    assert "The running allowance" in text and "come first" in text  # the result's own caution, in the legend
