"""A to-scale section of a plug in its port, drawn as SVG from a fit check's inputs and result.

Why a picture: a counter clerk sees at a glance that the electrode stands into the piston's
path or that the head's threads are left bare, where a table of margins needs reading.

The drawing is a half-section along the plug axis, chamber downwards, at one scale in
both directions (`data-px-per-mm` on the root element; the seat face lies at
`data-origin-y`). Every feature drawn at a computed axial position carries
`data-feature` and `data-axial-mm`, so a test can check that y = origin + axial × scale.
Shapes whose size no input gives (the hex body above the seat, the insulator, the
electrodes' thickness, the head's outer wall) are drawn schematically at plausible sizes.

Pure: strings in, a string out. Positions come from the engine's own geometry
derivation, so the drawing and the check never disagree.
"""
from __future__ import annotations

import math
import textwrap
from dataclasses import dataclass
from xml.sax.saxutils import escape, quoteattr

from service.fitment.catalog import Catalog
from service.fitment.context import FitContext
from service.fitment.defaults import CAUTIONS
from service.fitment.designation import parse_designation
from service.fitment.geometry import SHELL_EDGE, TIP, derive, obstacle_distance
from service.fitment.insert import coil_outer_thread
from service.fitment.model import Finding, FitResult, Options, PlugSpec, PortSpec
from service.fitment.stack import Bounds, Stack
from service.formats.result_json import result_document

MM_PER_INCH = 25.4  # exact (NIST SP 811, 2008, appendix B)
CONICAL_SEAT_HALF_ANGLE_DEG = 31.5  # 63° included taper (common practice), drawn schematically

CAUTION = ("Values are guidance: the engine maker's service data, local regulations and "
           "licensed practice come first. Schematic shapes are not to scale; positions along the axis are.")

# Greyscale-safe severity styles: each differs in symbol shape, stroke dash and label.
SEVERITY_STYLE = {
    "fail": {"colour": "#a4161a", "dash": "", "label": "FAIL", "symbol": "triangle"},
    "warn": {"colour": "#b35c00", "dash": "6 3", "label": "WARN", "symbol": "diamond"},
    "info": {"colour": "#3b5b7a", "dash": "2 3", "label": "INFO", "symbol": "circle"},
}

# Where a check's marker goes on the drawing: a named feature position.
CHECK_ANCHORS = {
    "thread": "thread", "seat": "seat_face", "reach": "thread_end", "piston": "piston_crown",
    "valve": "valve", "tool_clearance": "hex", "hex": "hex", "resistor": "hex", "torque": "hex",
    "thread_strength": "thread", "gap_voltage": "tip", "heat_range": "tip", "boot": "hex",
    "seat_diameter": "seat_face", "insert": "insert_end",
}

WIDTH_PX = 920
LEGEND_WRAP_CHARS = 135  # about 800 px of 10.5 px sans-serif
DRAWING_TOP_PX = 70.0
MAX_DRAWING_HEIGHT_PX = 560.0
MAX_HALF_WIDTH_PX = 215.0
HEAD_WALL_MM = 9.0  # schematic width of head material drawn beside the bore
STUB_MM = 9.0  # the plug body drawn above the seat, then broken off
MIN_PX_PER_MM, MAX_PX_PER_MM = 4.0, 24.0


@dataclass(frozen=True, slots=True)
class AxialLayout:
    """Nominal positions along the plug axis in mm from the seat face (None: not known)."""

    standoff: float | None
    port_depth: float | None
    port_depth_long: float | None
    thread_end: float | None
    tip: float | None
    piston: float | None
    valve: float | None


def _nominal(stack: Stack | None) -> float | None:
    return None if stack is None else stack.nominal


def axial_layout(plug: PlugSpec, port: PortSpec, catalog: Catalog | None = None,
                 options: Options | None = None) -> AxialLayout:
    """Positions from the engine's own derivation (`geometry.derive`), so they match the check."""
    ctx = FitContext(plug, port, options or Options(), catalog or Catalog(version="diagram", threads={}))
    derive(ctx)
    return AxialLayout(
        standoff=_nominal(ctx.gasket),
        port_depth=_nominal(ctx.port_depth),
        port_depth_long=_nominal(ctx.port_depth_long),
        thread_end=_nominal(ctx.thread_end),
        tip=_nominal(ctx.tip),
        piston=_nominal(obstacle_distance(ctx, port.seat_to_piston, port.piston_clearance)),
        valve=_nominal(obstacle_distance(ctx, port.seat_to_valve, port.valve_clearance)),
    )


def _format_length(mm: float, units: str, signed: bool = False) -> str:
    if units == "imperial":
        text = f"{mm / MM_PER_INCH:+.3f}" if signed else f"{mm / MM_PER_INCH:.3f}"
        return f"{text} in"
    text = f"{mm:+.2f}" if signed else f"{mm:.2f}"
    return f"{text} mm"


class _Svg:
    """A tiny SVG writer: keeps the element list and escapes every attribute and text."""

    def __init__(self) -> None:
        self.parts: list[str] = []

    def element(self, tag: str, text: str | None = None, **attrs: object) -> None:
        rendered = " ".join(f"{name.rstrip('_').replace('_', '-')}={quoteattr(_attr(value))}"
                            for name, value in attrs.items() if value is not None)
        if text is None:
            self.parts.append(f"<{tag} {rendered}/>")
        else:
            self.parts.append(f"<{tag} {rendered}>{escape(text)}</{tag}>")

    def raw(self, markup: str) -> None:
        self.parts.append(markup)


def _attr(value: object) -> str:
    if isinstance(value, float):
        return f"{value:.3f}".rstrip("0").rstrip(".")
    return str(value)


_DEFS = """<defs>
<pattern id="hatch-head" width="8" height="8" patternUnits="userSpaceOnUse" patternTransform="rotate(45)">
<rect width="8" height="8" fill="#e6e6e6"/><line x1="0" y1="0" x2="0" y2="8" stroke="#6b6b6b" stroke-width="1.2"/></pattern>
<pattern id="hatch-piston" width="7" height="7" patternUnits="userSpaceOnUse" patternTransform="rotate(-45)">
<rect width="7" height="7" fill="#d9d9d9"/><line x1="0" y1="0" x2="0" y2="7" stroke="#4d4d4d" stroke-width="1"/>
<line x1="0" y1="3.5" x2="7" y2="3.5" stroke="#4d4d4d" stroke-width="0.6"/></pattern>
<pattern id="dots-gasket" width="4" height="4" patternUnits="userSpaceOnUse">
<rect width="4" height="4" fill="#f4f4f4"/><circle cx="2" cy="2" r="0.9" fill="#333"/></pattern>
<marker id="arrow" viewBox="0 0 10 10" refX="9" refY="5" markerWidth="7" markerHeight="7" orient="auto-start-reverse">
<path d="M0,1 L10,5 L0,9 z" fill="#111"/></marker>
</defs>"""


def _symbol(svg: _Svg, severity: str, x: float, y: float, mark: str, size: float = 8.0) -> None:
    """A severity symbol told apart by shape, not colour: a filled triangle (fail), an open
    diamond (warn), a dotted circle (info); `mark` (the finding's number) inside."""
    style = SEVERITY_STYLE[severity]
    colour = style["colour"]
    text_colour = colour
    if style["symbol"] == "triangle":
        points = f"{x:.2f},{y - size * 1.1:.2f} {x + size:.2f},{y + size * 0.75:.2f} {x - size:.2f},{y + size * 0.75:.2f}"
        svg.element("polygon", points=points, fill=colour, stroke="#000", stroke_width=1.0)
        text_colour = "#fff"
    elif style["symbol"] == "diamond":
        points = f"{x:.2f},{y - size:.2f} {x + size:.2f},{y:.2f} {x:.2f},{y + size:.2f} {x - size:.2f},{y:.2f}"
        svg.element("polygon", points=points, fill="#fff", stroke=colour, stroke_width=2.2)
    else:
        svg.element("circle", cx=x, cy=y, r=size * 0.9, fill="#fff", stroke=colour, stroke_width=1.6,
                    stroke_dasharray="2 1.5")
    svg.element("text", mark, x=x, y=y + 3.4, font_size=9, font_weight="bold", text_anchor="middle",
                fill=text_colour, font_family="sans-serif")


@dataclass(frozen=True, slots=True)
class _Frame:
    """Where the section sits on the page: one scale along and across the plug axis, the
    seat face at `origin_y` and the axis at `axis_x`; `bottom` is the drawing's lowest y."""

    scale: float
    axis_x: float
    origin_y: float
    radius: float  # the thread's, mm
    half_width: float  # mm from the axis to the drawn head's outer edge
    bottom: float
    tilt: float  # tan θ: how the crown, square to the cylinder axis, leans in the plug's frame

    def x(self, mm: float) -> float:
        return self.axis_x + mm * self.scale

    def y(self, mm: float) -> float:
        return self.origin_y + mm * self.scale

    def crown(self, across_mm: float, piston_mm: float) -> float:
        """The crown's axial position at `across_mm` from the plug axis: nearer the seat on
        the left, where the drawing puts the shell's low edge."""
        return piston_mm + across_mm * self.tilt


def render_fit_svg(plug: PlugSpec, port: PortSpec, result: FitResult, units: str = "metric",
                   catalog: Catalog | None = None, options: Options | None = None) -> str:
    """The section drawing as an SVG document (a string), lengths labelled in `units`.

    `catalog` supplies the standard gasket when the plug gives none, and `options` the
    gasket condition and indexing washer, exactly as the check used them; without the
    catalogue such a plug is drawn without a known stand-off.
    """
    layout = axial_layout(plug, port, catalog, options)
    frame = _frame(plug, port, layout)
    findings = list(result.findings)
    legend_rows = _legend_rows(findings, [f["message"] for f in result_document(result, units)["findings"]])
    legend_rows += _caution_rows(result)
    height = frame.bottom + 60.0 + sum(20.0 + 13.0 * len(lines) for _, _, _, lines in legend_rows) + 50.0
    standoff = layout.standoff if layout.standoff is not None else 0.0
    hex_half = (plug.hex / 2.0) if plug.hex else frame.radius + 3.0

    svg = _Svg()
    _heading(svg, plug, port, result, frame, units, height)
    _draw_piston(svg, layout, frame, _piston_allowance(result))  # first: where a leaning crown runs under the
    # head, the head hides it
    _draw_head(svg, port, layout, frame)
    _draw_insert(svg, port, frame, units)
    _draw_seat_machining(svg, port, frame, units)
    _draw_valve(svg, layout, frame)
    _draw_gasket(svg, plug, standoff, frame)
    _plug_section(svg, plug, layout, frame, hex_half, standoff)
    _draw_governing_point(svg, result, layout, frame)
    _draw_dimensions(svg, _dimensions(result, layout, frame, units), frame)
    anchors = _anchors(layout, standoff)
    if port.insert is not None and port.insert.length is not None:
        anchors["insert_end"] = port.insert.length.nominal
    _draw_markers(svg, findings, anchors, frame)
    _draw_scale_bar(svg, frame, units)
    _draw_legend(svg, legend_rows, frame, height)
    svg.raw("</svg>")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + "\n".join(svg.parts) + "\n"


def _frame(plug: PlugSpec, port: PortSpec, layout: AxialLayout) -> _Frame:
    """One scale that fits the section's height and width into the drawing area."""
    diameter = _diameter_from(plug.thread) or _diameter_from(port.thread) or 14.0
    radius = diameter / 2.0
    half_width = radius + HEAD_WALL_MM
    tilt = math.tan(math.radians(port.plug_inclination_deg or 0.0))
    standoff = layout.standoff if layout.standoff is not None else 0.0
    known = [v for v in (layout.port_depth, layout.port_depth_long, layout.thread_end, layout.tip,
                         layout.valve) if v is not None]
    if layout.piston is not None:
        known.append(layout.piston + half_width * tilt)  # the crown's lowest drawn point
    if port.insert is not None and port.insert.length is not None:
        known.append(port.insert.length.nominal)
    top_mm = -(standoff + STUB_MM)
    bottom_mm = max(known + [12.0]) + 5.0
    scale = min(MAX_DRAWING_HEIGHT_PX / (bottom_mm - top_mm), MAX_HALF_WIDTH_PX / half_width)
    scale = max(MIN_PX_PER_MM, min(MAX_PX_PER_MM, scale))
    origin_y = DRAWING_TOP_PX - top_mm * scale
    return _Frame(scale, 40.0 + half_width * scale, origin_y, radius, half_width, origin_y + bottom_mm * scale, tilt)


def _heading(svg: _Svg, plug: PlugSpec, port: PortSpec, result: FitResult, frame: _Frame, units: str,
             height: float) -> None:
    svg.raw(
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH_PX}" height="{height:.0f}" '
        f'viewBox="0 0 {WIDTH_PX} {height:.0f}" data-px-per-mm="{frame.scale:.6f}" '
        f'data-origin-y="{frame.origin_y:.6f}" data-axis-x="{frame.axis_x:.6f}" data-units={quoteattr(units)} '
        'font-family="sans-serif">'
    )
    svg.element("title", f"Plug {plug.thread} {plug.seat} seat in port {port.thread} {port.seat} seat: "
                         f"verdict {result.verdict}")
    svg.raw(_DEFS)
    svg.element("rect", x=0, y=0, width=WIDTH_PX, height=f"{height:.0f}", fill="#ffffff")
    verdict_style = SEVERITY_STYLE.get(result.verdict, {"label": result.verdict.upper(), "colour": "#1b5e20"})
    svg.element("text", f"Plug {plug.thread} ({plug.seat} seat) in port {port.thread} ({port.seat} seat)",
                x=20, y=28, font_size=17, font_weight="bold", fill="#111")
    svg.element("text", f"verdict: {'PASS' if result.verdict == 'pass' else verdict_style['label']}"
                        f"   ·   section along the plug axis, to scale ({_scale_note(frame.scale, units)})",
                x=20, y=48, font_size=12, fill="#333")


def _draw_head(svg: _Svg, port: PortSpec, layout: AxialLayout, frame: _Frame) -> None:
    """Hatched head material either side of the bore down to the chamber roof (short side
    left, long side right), the port's thread, the roof line and the seat face datum."""
    x, y, radius, half_width = frame.x, frame.y, frame.radius, frame.half_width
    depth = layout.port_depth
    if depth is not None:
        depth_long = layout.port_depth_long if layout.port_depth_long is not None else depth

        def roof(mm_x: float) -> float:
            return depth + (mm_x + radius) * (depth_long - depth) / (2.0 * radius)

        left = [(-half_width, 0.0), (-radius, 0.0), (-radius, depth), (-half_width, roof(-half_width))]
        right = [(radius, 0.0), (half_width, 0.0), (half_width, roof(half_width)), (radius, depth_long)]
        if port.seat == "conical":
            taper = math.tan(math.radians(CONICAL_SEAT_HALF_ANGLE_DEG))
            gauge_r, rise = radius + 1.0, 2.5
            left = [(-half_width, -rise), (-(gauge_r + rise * taper), -rise), (-radius, 1.0 / taper),
                    (-radius, depth), (-half_width, roof(-half_width))]
            right = [(gauge_r + rise * taper, -rise), (half_width, -rise), (half_width, roof(half_width)),
                     (radius, depth_long), (radius, 1.0 / taper)]
        for polygon, side in ((left, "short"), (right, "long")):
            svg.element("polygon", points=" ".join(f"{x(px):.2f},{y(py):.2f}" for px, py in polygon),
                        fill="url(#hatch-head)", stroke="#222", stroke_width=1.4, data_part=f"head-{side}-side")
        # the port's own thread on the bore walls: visible wherever the plug leaves it bare
        thread_top = 1.0 / math.tan(math.radians(CONICAL_SEAT_HALF_ANGLE_DEG)) if port.seat == "conical" else 0.0
        _wall_teeth(svg, x(-radius), y(thread_top), y(depth), -1, 1.25 * frame.scale)
        _wall_teeth(svg, x(radius), y(thread_top), y(depth_long), 1, 1.25 * frame.scale)
        # the chamber surface (roof), drawn across the bore too
        svg.element("line", x1=x(-radius), y1=y(depth), x2=x(radius), y2=y(depth_long), stroke="#555",
                    stroke_width=1.0, stroke_dasharray="10 3 2 3",
                    data_feature="chamber_surface", data_axial_mm=f"{depth:.6f}")
        _feature_tick(svg, "port_depth", depth, x(-radius), y(depth), x(-radius - 2.0))
        _feature_tick(svg, "port_depth_long", depth_long, x(radius), y(depth_long), x(radius + 2.0))
        _label(svg, "chamber surface", x(-half_width) + 6, y(roof(-half_width)) - 5, italic=True)
        _label(svg, "cylinder head", x(-half_width) + 6, y(min(depth, 6.0) / 2.0) + 4, bold=True)
    # the seat face (origin): a long dash-dot datum line
    svg.element("line", x1=x(-half_width) - 10, y1=y(0.0), x2=x(half_width) + 10, y2=y(0.0),
                stroke="#000", stroke_width=1.0, stroke_dasharray="14 3 3 3",
                data_feature="seat_face", data_axial_mm="0")


def _piston_allowance(result: FitResult) -> float:
    """The allowance the piston margin took off (`analysis.piston.dynamic_allowance`: the
    option, or the running allowance estimated from the head's max_rpm), mm; 0 without one."""
    allowance = (result.analysis.get("piston") or {}).get("dynamic_allowance")
    return allowance[0] if isinstance(allowance, tuple) else 0.0


def _draw_insert(svg: _Svg, port: PortSpec, frame: _Frame, units: str) -> None:
    """A thread-repair insert: a sleeve in the bore from the seat face to its length (drawn
    past the chamber surface when it stands proud), as wide as its outer thread."""
    insert = port.insert
    if insert is None or insert.length is None:
        return
    x, y, radius = frame.x, frame.y, frame.radius
    length = insert.length.nominal
    size = parse_designation(port.thread)
    if insert.kind == "coil" and size is not None and size[1] is not None:
        outer = coil_outer_thread(size[0], size[1])[0] / 2.0
    else:
        outer_size = parse_designation(insert.outer_thread) if insert.outer_thread else None
        outer = outer_size[0] / 2.0 if outer_size is not None else radius + 1.5
    for side in (-1, 1):
        left, right = sorted((side * radius, side * outer))
        svg.element("rect", x=f"{x(left):.2f}", y=f"{y(0.0):.2f}", width=f"{(right - left) * frame.scale:.2f}",
                    height=f"{length * frame.scale:.2f}", fill="#c9d6df", stroke="#2f4858", stroke_width=1.0,
                    data_part="insert", data_axial_mm=f"{length:.6f}")
    kind = "coil" if insert.kind == "coil" else "solid"
    _label(svg, f"thread insert ({kind}), {_format_length(length, units)}", x(outer) + 4, y(length) + 12, size=10.0)


def _draw_seat_machining(svg: _Svg, port: PortSpec, frame: _Frame, units: str) -> None:
    """The spot face's diameter as ticks on the seat face, and a counterbore around the hex
    as a dashed outline above it (its depth is not an input: drawn schematic)."""
    x, y = frame.x, frame.y
    if port.spot_face_diameter is not None:
        half = port.spot_face_diameter / 2.0
        for side in (-1, 1):
            svg.element("line", x1=f"{x(side * half):.2f}", y1=f"{y(0.0) - 6:.2f}", x2=f"{x(side * half):.2f}",
                        y2=f"{y(0.0) + 6:.2f}", stroke="#2f4858", stroke_width=1.4, data_feature="spot_face")
        _label(svg, f"spot face, diameter {_format_length(port.spot_face_diameter, units)}", x(half) + 6, y(0.0) + 14,
               size=10.0)
    if port.counterbore_diameter is not None:
        half = port.counterbore_diameter / 2.0
        top = -STUB_MM
        svg.element("path", d=(f"M{x(-half):.2f},{y(top):.2f} L{x(-half):.2f},{y(0.0):.2f} "
                               f"M{x(half):.2f},{y(top):.2f} L{x(half):.2f},{y(0.0):.2f}"),
                    fill="none", stroke="#2f4858", stroke_width=1.2, stroke_dasharray="6 3",
                    data_feature="counterbore")
        _label(svg, f"counterbore, diameter {_format_length(port.counterbore_diameter, units)}", x(half) + 6,
               y(top / 2.0), size=10.0)


def _draw_piston(svg: _Svg, layout: AxialLayout, frame: _Frame, allowance: float = 0.0) -> None:
    """The piston crown at top dead centre, square to the cylinder axis: across the plug's
    frame it leans by the plug's inclination. `data-axial-mm` is where it crosses the axis.
    With an allowance (running or given) a dashed line marks the crown at speed, where the
    piston margin is measured to."""
    piston = layout.piston
    if piston is None:
        return
    x, y, half_width = frame.x, frame.y, frame.half_width
    left, right = frame.crown(-half_width, piston), frame.crown(half_width, piston)
    outline = [(x(-half_width), y(left)), (x(half_width), y(right)), (x(half_width), max(frame.bottom, y(right) + 6)),
               (x(-half_width), max(frame.bottom, y(left) + 6))]
    svg.element("polygon", points=" ".join(f"{px:.2f},{py:.2f}" for px, py in outline), fill="url(#hatch-piston)",
                stroke="none")
    svg.element("line", x1=x(-half_width), y1=y(left), x2=x(half_width), y2=y(right), stroke="#000",
                stroke_width=2.2, data_feature="piston_crown", data_axial_mm=f"{piston:.6f}")
    _label(svg, "piston crown at TDC", x(-half_width) + 6, max(y(left) + 16, frame.bottom - 8), bold=True)
    if allowance > 0.0:
        running = piston - allowance
        near_left, near_right = frame.crown(-half_width, running), frame.crown(half_width, running)
        svg.element("line", x1=x(-half_width), y1=y(near_left), x2=x(half_width), y2=y(near_right), stroke="#000",
                    stroke_width=1.2, stroke_dasharray="6 2 1 2", data_feature="piston_crown_at_speed",
                    data_axial_mm=f"{running:.6f}")


def _draw_valve(svg: _Svg, layout: AxialLayout, frame: _Frame) -> None:
    """The valve at its closest approach: rim at the given depth, head below, stem above."""
    if layout.valve is None:
        return
    rim = frame.y(layout.valve)
    left_edge, right_edge = frame.x(frame.radius + 0.8), frame.x(frame.half_width - 0.8)
    stem = (left_edge + right_edge) / 2.0
    disc = 1.8 * frame.scale
    path = (f"M{left_edge:.2f},{rim:.2f} L{right_edge:.2f},{rim:.2f} L{right_edge:.2f},{rim + disc * 0.6:.2f} "
            f"L{right_edge - disc * 0.5:.2f},{rim + disc:.2f} L{left_edge + disc * 0.5:.2f},{rim + disc:.2f} "
            f"L{left_edge:.2f},{rim + disc * 0.6:.2f} Z")
    svg.element("path", d=path, fill="#f2f2f2", stroke="#000", stroke_width=1.4, stroke_dasharray="5 2",
                data_part="valve")
    svg.element("path", d=f"M{stem - 3:.2f},{rim:.2f} L{stem - 3:.2f},{rim - 30:.2f} M{stem + 3:.2f},{rim:.2f} "
                          f"L{stem + 3:.2f},{rim - 30:.2f}", fill="none", stroke="#000", stroke_width=1.0,
                stroke_dasharray="5 2")
    svg.element("line", x1=left_edge, y1=rim, x2=right_edge, y2=rim, stroke="#000", stroke_width=2.0,
                data_feature="valve", data_axial_mm=f"{layout.valve:.6f}")
    _label(svg, "valve at closest approach", right_edge, rim + disc + 13, size=10, anchor="end")


def _draw_gasket(svg: _Svg, plug: PlugSpec, standoff: float, frame: _Frame) -> None:
    """The gasket (with any indexing washer) of a flat-seat plug, between its seat and the head's."""
    if plug.seat != "flat" or not standoff:
        return
    x, scale, radius = frame.x, frame.scale, frame.radius
    gasket_top = frame.y(-standoff)
    for side in (-1, 1):
        inner, outer = radius + 0.2, radius + 3.6
        x0 = x(side * outer) if side < 0 else x(inner)
        svg.element("rect", x=x0, y=gasket_top, width=(outer - inner) * scale, height=standoff * scale,
                    fill="url(#dots-gasket)", stroke="#000", stroke_width=1.0)
    svg.element("line", x1=x(-radius - 3.6), y1=gasket_top, x2=x(radius + 3.6), y2=gasket_top,
                stroke="#000", stroke_width=0.8, stroke_dasharray="3 2",
                data_feature="gasket_top", data_axial_mm=f"{-standoff:.6f}")
    svg.element("text", "gasket", x=x(-radius - 3.6) - 6, y=gasket_top + standoff * scale / 2 + 4,
                font_size=11, text_anchor="end", fill="#111")


def _governing_point(result: FitResult, layout: AxialLayout, frame: _Frame) -> tuple[str, float, float] | None:
    """(feature, mm across the axis, mm along it) of the plug's point nearest the piston,
    as the check found it (`analysis.piston`); None without a piston margin."""
    piston = result.analysis.get("piston")
    if piston is None or layout.tip is None or layout.thread_end is None:
        return None
    if piston.get("governing_feature") == SHELL_EDGE:
        return SHELL_EDGE, -frame.radius, layout.thread_end
    return TIP, 0.0, layout.tip


def _draw_governing_point(svg: _Svg, result: FitResult, layout: AxialLayout, frame: _Frame) -> None:
    """A ringed point where the plug comes nearest the piston: the electrode tip, or the low
    edge of the shell's thread end when the plug's inclination brings that nearer."""
    point = _governing_point(result, layout, frame)
    if point is None:
        return
    feature, across, along = point
    cx, cy = frame.x(across), frame.y(along)
    svg.element("circle", cx=cx, cy=cy, r=5.0, fill="none", stroke="#a4161a", stroke_width=1.8,
                data_feature="piston_governing_point", data_governing=feature, data_axial_mm=f"{along:.6f}",
                data_across_mm=f"{across:.6f}")
    name = "shell edge" if feature == SHELL_EDGE else "electrode tip"
    _label(svg, f"nearest the piston: {name}", cx + 8, cy + 16, size=10)


def _anchors(layout: AxialLayout, standoff: float) -> dict[str, float]:
    """Axial positions (mm) the finding markers point at, by name (see CHECK_ANCHORS)."""
    anchors: dict[str, float] = {"seat_face": 0.0, "hex": -standoff - STUB_MM / 2.0}
    if layout.piston is not None:
        anchors["piston_crown"] = layout.piston
    if layout.valve is not None:
        anchors["valve"] = layout.valve
    if layout.thread_end is not None:
        anchors["thread_end"] = layout.thread_end
        anchors["thread"] = layout.thread_end / 2.0
    if layout.tip is not None:
        anchors["tip"] = layout.tip
    return anchors


def _draw_dimensions(svg: _Svg, dims: list[tuple[str, float, float, str]], frame: _Frame) -> None:
    """Dimension lines in columns to the right of the head, labels stacked clear of each other."""
    x, y = frame.x, frame.y
    column_x = x(frame.half_width) + 28.0
    label_x = column_x + 18.0 * max(1, len(dims)) + 12.0
    label_ys: list[tuple[float, float]] = []  # (baseline, height) of each label placed
    for index, (name, start_mm, end_mm, text) in enumerate(dims):
        dx = column_x + 18.0 * index
        y0, y1 = y(start_mm), y(end_mm)
        for ext in (y0, y1):
            svg.element("line", x1=x(frame.radius), y1=ext, x2=dx + 4, y2=ext, stroke="#777", stroke_width=0.6,
                        stroke_dasharray="2 2")
        if abs(y1 - y0) >= 8:
            svg.element("line", x1=dx, y1=y0, x2=dx, y2=y1, stroke="#111", stroke_width=1.1,
                        marker_start="url(#arrow)", marker_end="url(#arrow)", data_dimension=name)
        else:  # too short for arrows inside: arrows pointing in from outside
            svg.element("line", x1=dx, y1=min(y0, y1) - 12, x2=dx, y2=min(y0, y1), stroke="#111",
                        stroke_width=1.1, marker_end="url(#arrow)", data_dimension=name)
            svg.element("line", x1=dx, y1=max(y0, y1) + 12, x2=dx, y2=max(y0, y1), stroke="#111",
                        stroke_width=1.1, marker_end="url(#arrow)")
        wanted = (y0 + y1) / 2.0 + 4.0
        first, *rest = text.split("\n")
        height = 17.0 + 13.0 * len(rest)  # 30 for the usual two lines
        placed = max([wanted] + [ly + taken for ly, taken in label_ys if ly > wanted - taken])
        label_ys.append((placed, height))
        svg.element("line", x1=dx, y1=(y0 + y1) / 2.0, x2=label_x - 4, y2=placed - 4, stroke="#999",
                    stroke_width=0.6)
        svg.element("text", first, x=label_x, y=placed, font_size=12, fill="#111", font_weight="bold")
        for number, line in enumerate(rest, start=1):
            svg.element("text", line, x=label_x, y=placed + 13 * number, font_size=10.5, fill="#333")


def _draw_markers(svg: _Svg, findings: list[Finding], anchors: dict[str, float], frame: _Frame) -> None:
    """Each listed finding's numbered symbol beside the head, with a leader to its feature."""
    offsets: dict[str, int] = {}
    for number, finding in enumerate(_listed(findings), start=1):
        if finding.code == "NOT_CHECKED":
            continue
        anchor = CHECK_ANCHORS.get(finding.check)
        if anchor not in anchors:
            anchor = "seat_face"
        count = offsets.get(anchor, 0)
        offsets[anchor] = count + 1
        mx, my = frame.x(-frame.half_width) - 18.0, frame.y(anchors[anchor]) + 19.0 * count
        my = min(max(my, DRAWING_TOP_PX), frame.bottom)
        style = SEVERITY_STYLE[finding.severity]
        svg.element("line", x1=mx + 8, y1=my, x2=frame.x(-frame.radius), y2=frame.y(anchors[anchor]),
                    stroke=style["colour"], stroke_width=1.2, stroke_dasharray=style["dash"] or None)
        _symbol(svg, finding.severity, mx, my, str(number))


def _draw_scale_bar(svg: _Svg, frame: _Frame, units: str) -> None:
    bar_mm = 5.0 if units == "metric" else MM_PER_INCH / 4.0
    bar_label = "5 mm" if units == "metric" else "1/4 in"
    bx, by = 40.0, frame.bottom + 24.0
    svg.element("rect", x=bx, y=by - 4, width=bar_mm * frame.scale, height=6, fill="#000",
                data_scale_bar_mm=f"{bar_mm:.4f}")
    svg.element("text", bar_label, x=bx + bar_mm * frame.scale + 6, y=by + 2, font_size=11, fill="#111")


def _draw_legend(svg: _Svg, legend_rows: list[tuple[str, str, str, list[str]]], frame: _Frame,
                 height: float) -> None:
    """The numbered findings with their messages, then the caution."""
    ly = frame.bottom + 52.0
    svg.element("text", "Findings", x=40, y=ly, font_size=13, font_weight="bold", fill="#111")
    for mark, severity, heading, lines in legend_rows:
        ly += 20.0
        if severity in SEVERITY_STYLE:
            _symbol(svg, severity, 50.0, ly - 4.0, mark, size=7.5)
        svg.element("text", heading, x=66, y=ly, font_size=11.5, fill="#111", font_weight="bold")
        for line in lines:
            ly += 13.0
            svg.element("text", line, x=66, y=ly, font_size=10.5, fill="#333")
    svg.element("text", CAUTION, x=20, y=height - 16, font_size=10.5, fill="#333", font_style="italic")


def _label(svg: _Svg, text: str, x: float, y: float, size: float = 11.0, anchor: str = "start",
           bold: bool = False, italic: bool = False) -> None:
    """Text on a white backing, so it stays readable over hatching (width estimated)."""
    width = len(text) * size * 0.56 + 6
    left = x - 3 if anchor == "start" else x - width + 3 if anchor == "end" else x - width / 2
    svg.element("rect", x=left, y=y - size, width=width, height=size + 4, fill="#ffffff", fill_opacity=0.88)
    svg.element("text", text, x=x, y=y, font_size=size, text_anchor=None if anchor == "start" else anchor,
                fill="#111", font_weight="bold" if bold else None, font_style="italic" if italic else None)


def _diameter_from(designation: str) -> float | None:
    from service.fitment.designation import parse_designation

    parsed = parse_designation(designation)
    return parsed[0] if parsed else None


def _scale_note(scale: float, units: str) -> str:
    if units == "imperial":
        return f"{scale * MM_PER_INCH:.0f} px per inch"
    return f"{scale:.1f} px per mm"


def _feature_tick(svg: _Svg, name: str, axial: float, x0: float, y0: float, x1: float) -> None:
    svg.element("line", x1=x0, y1=y0, x2=x1, y2=y0, stroke="#000", stroke_width=1.4,
                data_feature=name, data_axial_mm=f"{axial:.6f}")


def _wall_teeth(svg: _Svg, edge: float, top: float, bottom: float, outward: int, pitch_px: float) -> None:
    """The port's internal thread: teeth cut into the head material beside the bore."""
    if bottom - top < pitch_px or pitch_px <= 0:
        return
    depth = min(pitch_px * 0.6, 6.0)
    points, yy, cut = [f"{edge:.2f},{top:.2f}"], top, True
    while yy + pitch_px / 2 <= bottom:
        yy += pitch_px / 2
        points.append(f"{edge + outward * depth if cut else edge:.2f},{yy:.2f}")
        cut = not cut
    svg.element("polyline", points=" ".join(points), fill="none", stroke="#555", stroke_width=0.8)


def _thread_teeth(svg: _Svg, left: float, right: float, top: float, bottom: float, pitch_px: float) -> None:
    """Zig-zag flanks on both sides of the thread, one tooth per pitch (schematic depth)."""
    if bottom - top < pitch_px or pitch_px <= 0:
        return
    depth = min(pitch_px * 0.6, 6.0)
    for edge, sign in ((left, 1), (right, -1)):
        points = [f"{edge:.2f},{top:.2f}"]
        yy, inward = top, True
        while yy + pitch_px / 2 <= bottom:
            yy += pitch_px / 2
            points.append(f"{edge + sign * depth if inward else edge:.2f},{yy:.2f}")
            inward = not inward
        svg.element("polyline", points=" ".join(points), fill="none", stroke="#333", stroke_width=0.9)


def _plug_section(svg: _Svg, plug: PlugSpec, layout: AxialLayout, frame: _Frame, hex_half: float,
                  standoff: float) -> None:
    """The plug cut along its axis: shell walls (hex stub and thread), the insulator and
    its nose, the centre electrode and the ground electrode, ending at the tip position.

    Wall thickness, insulator and electrode sizes are schematic; the seat, thread end and
    tip are at their computed positions.
    """
    x, y, scale, radius = frame.x, frame.y, frame.scale, frame.radius
    bore = radius * 0.64  # schematic inner radius of the shell
    conical = plug.seat == "conical"
    taper = math.tan(math.radians(CONICAL_SEAT_HALF_ANGLE_DEG))
    seat_y = 0.0 if conical else -standoff
    top = seat_y - STUB_MM
    end = layout.thread_end
    tip = layout.tip
    thread_start = 1.0 / taper if conical else seat_y
    shell_end = end if end is not None else seat_y + 6.0  # reach unknown: a short stub only

    for side in (-1, 1):
        outline = [(side * bore, top), (side * hex_half, top)]
        if conical:
            seat_r = radius + 1.0 + 2.5 * taper
            outline += [(side * hex_half, -2.5), (side * seat_r, -2.5), (side * radius, thread_start)]
        else:
            outline += [(side * hex_half, seat_y), (side * radius, seat_y)]
        outline += [(side * radius, shell_end), (side * bore, shell_end)]
        svg.element("polygon", points=" ".join(f"{x(px):.2f},{y(py):.2f}" for px, py in outline),
                    fill="#b3b3b3", stroke="#000", stroke_width=1.5, data_part="plug-shell")
    if end is not None:
        _thread_teeth(svg, x(-radius), x(radius), y(thread_start), y(end), 1.25 * scale)

    gap = plug.gap if plug.gap else 0.7
    # a ground electrode about 1.3 mm thick, thinner when the firing end leaves less room
    ground = min(1.3, max(0.4, 0.6 * ((tip or 0.0) - shell_end - gap)))
    if tip is not None and tip >= shell_end + ground + gap:
        electrode_end = tip - ground - gap
    elif tip is not None:
        electrode_end = tip  # recessed or surface gap: the centre electrode is the furthest point
    else:
        electrode_end = shell_end - 0.5
    nose_end = min(electrode_end - 0.5, max(shell_end - 1.0, electrode_end - 1.5))
    nose_r = max(radius * 0.3, 1.6)
    insulator = [(-bore, top), (-bore, shell_end - 6.0), (-nose_r, nose_end), (nose_r, nose_end),
                 (bore, shell_end - 6.0), (bore, top)]
    svg.element("polygon", points=" ".join(f"{x(px):.2f},{y(py):.2f}" for px, py in insulator),
                fill="#fbfbf4", stroke="#000", stroke_width=1.1, data_part="insulator")
    svg.element("rect", x=x(-1.0), y=y(top), width=2.0 * scale, height=max(0.0, electrode_end - top) * scale,
                fill="#4d4d4d", stroke="#000", stroke_width=0.8, data_part="centre-electrode")
    if tip is not None and tip >= shell_end + ground + gap:
        arm_in, arm_out = bore - 0.2, bore + 1.1
        svg.element("path", d=(f"M{x(arm_in):.2f},{y(shell_end):.2f} L{x(arm_in):.2f},{y(tip - ground):.2f} "
                               f"L{x(-1.6):.2f},{y(tip - ground):.2f} L{x(-1.6):.2f},{y(tip):.2f} "
                               f"L{x(arm_out):.2f},{y(tip):.2f} L{x(arm_out):.2f},{y(shell_end):.2f} Z"),
                    fill="#7a7a7a", stroke="#000", stroke_width=1.0, data_part="ground-electrode")
    # break line across the top of the stub: the rest of the plug is not drawn
    zig = " ".join(f"L{x(-hex_half + i * hex_half / 4):.2f},{y(top) + (4 if i % 2 else -4):.2f}" for i in range(1, 9))
    svg.element("path", d=f"M{x(-hex_half):.2f},{y(top):.2f} {zig}", fill="none", stroke="#000", stroke_width=1.2)
    svg.element("text", "plug (section; broken off above the hex)", x=x(hex_half) + 8, y=y(top) + 12,
                font_size=11, fill="#111")
    if end is not None:
        svg.element("line", x1=x(-radius) - 6, y1=y(end), x2=x(radius) + 6, y2=y(end), stroke="#000",
                    stroke_width=2.0, data_feature="thread_end", data_axial_mm=f"{end:.6f}")
    if tip is not None:
        svg.element("line", x1=x(-3.0), y1=y(tip), x2=x(3.0), y2=y(tip), stroke="#000", stroke_width=1.0,
                    stroke_dasharray="2 1.5", data_feature="tip", data_axial_mm=f"{tip:.6f}")


def _bounds_text(name: str, entry: Bounds, units: str, signed: bool = False) -> str:
    return (f"{name} {_format_length(entry.nominal, units, signed)}\n"
            f"worst case {_format_length(entry.min, units, signed)} to {_format_length(entry.max, units, signed)}")


def _dimensions(result: FitResult, layout: AxialLayout, frame: _Frame,
                units: str) -> list[tuple[str, float, float, str]]:
    """(name, from mm, to mm, label) for each margin the drawing dimensions; the piston
    margin from the plug's point nearest the piston to the crown above that point."""
    dims: list[tuple[str, float, float, str]] = []
    geometry = result.geometry
    if layout.port_depth is not None:
        dims.append(("port_depth", 0.0, layout.port_depth,
                     f"port depth {_format_length(layout.port_depth, units)}\nseat face to chamber (short side)"))
    inclined = layout.port_depth_long != layout.port_depth
    for name, depth, side in (("protrusion_short_side", layout.port_depth, ", short side"),
                              ("protrusion_long_side", layout.port_depth_long, ", long side")):
        entry = geometry.get(name)
        if entry is None or layout.thread_end is None or depth is None:
            continue
        if name == "protrusion_long_side" and not inclined:
            continue  # a flat roof: one side says it all
        word = "protrusion" if entry.nominal >= 0 else "recess"
        dims.append((name, depth, layout.thread_end,
                     _bounds_text(word + (side if inclined else ""), entry, units, signed=True)))
    point = _governing_point(result, layout, frame)
    if "piston_margin" in geometry and point is not None and layout.piston is not None:
        _feature, across, along = point
        allowance = _piston_allowance(result)
        label = _bounds_text("piston margin", geometry["piston_margin"], units)
        if allowance > 0.0:  # measured to the crown at speed
            label += f"\nto the crown at speed: {_format_length(allowance, units)} allowance off"
        dims.append(("piston_margin", along, frame.crown(across, layout.piston - allowance), label))
    if "valve_margin" in geometry and layout.tip is not None and layout.valve is not None:
        dims.append(("valve_margin", layout.tip, layout.valve,
                     _bounds_text("valve margin", geometry["valve_margin"], units)))
    return dims


def _caution_rows(result: FitResult) -> list[tuple[str, str, str, list[str]]]:
    """The result's own cautions beyond the general one the drawing ends with (the running
    allowance's, anti-seize's, an aluminium head's, an insert's), as legend rows."""
    return [("", "", "Caution", textwrap.wrap(text, LEGEND_WRAP_CHARS))
            for text in result.cautions if text not in CAUTIONS]


def _listed(findings: list[Finding]) -> list[Finding]:
    """The findings the legend lists one by one (and numbers): all but plain NOT_CHECKED."""
    return [f for f in findings if f.code != "NOT_CHECKED" or f.severity != "info"]


def _legend_rows(findings: list[Finding], messages: list[str]) -> list[tuple[str, str, str, list[str]]]:
    """(mark, severity, heading, wrapped message lines) per listed finding, numbered as on
    the drawing; the checks skipped for lack of data share one row."""
    message_of = {id(finding): message for finding, message in zip(findings, messages, strict=False)}
    rows: list[tuple[str, str, str, list[str]]] = []
    for number, finding in enumerate(_listed(findings), start=1):
        label = SEVERITY_STYLE[finding.severity]["label"]
        rows.append((str(number), finding.severity,
                     f"{label}  {finding.code}  ({finding.check.replace('_', ' ')})",
                     textwrap.wrap(message_of[id(finding)], LEGEND_WRAP_CHARS)))
    skipped = sorted({f.check.replace("_", " ") for f in findings
                      if f.code == "NOT_CHECKED" and f.severity == "info"})
    if skipped:
        rows.append(("i", "info", "INFO  not checked for lack of data",
                     textwrap.wrap(", ".join(skipped) + " (the result's findings say what each one needs)",
                                   LEGEND_WRAP_CHARS)))
    if not rows:
        rows.append(("", "", "No findings: every check that had its data passed.", []))
    return rows
