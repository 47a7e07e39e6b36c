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
from service.fitment.geometry import derive
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


def axial_layout(plug: PlugSpec, port: PortSpec, catalog: Catalog | None = None) -> AxialLayout:
    """Positions from the engine's own derivation (`geometry.derive`), so they match the check."""
    ctx = FitContext(plug, port, Options(), catalog or Catalog(version="diagram", threads={}))
    derive(ctx)
    depth = ctx.port_depth

    def obstacle(from_seat, from_breakout) -> float | None:
        if from_seat is not None:
            return from_seat.nominal
        if from_breakout is not None and depth is not None:
            return depth.nominal + from_breakout.nominal
        return None

    return AxialLayout(
        standoff=_nominal(ctx.gasket),
        port_depth=_nominal(depth),
        port_depth_long=_nominal(ctx.port_depth_long),
        thread_end=_nominal(ctx.thread_end),
        tip=_nominal(ctx.tip),
        piston=obstacle(port.seat_to_piston, port.piston_clearance),
        valve=obstacle(port.seat_to_valve, port.valve_clearance),
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


def render_fit_svg(plug: PlugSpec, port: PortSpec, result: FitResult, units: str = "metric",
                   catalog: Catalog | None = None) -> str:
    """The section drawing as an SVG document (a string), lengths labelled in `units`.

    `catalog` supplies the standard gasket when the plug gives none, exactly as the check
    used it; without it such a plug is drawn without a known stand-off.
    """
    layout = axial_layout(plug, port, catalog)
    diameter = _diameter_from(plug.thread) or _diameter_from(port.thread) or 14.0
    radius = diameter / 2.0
    standoff = layout.standoff if layout.standoff is not None else 0.0
    hex_half = (plug.hex / 2.0) if plug.hex else radius + 3.0

    known = [v for v in (layout.port_depth, layout.port_depth_long, layout.thread_end, layout.tip,
                         layout.piston, layout.valve) if v is not None]
    top_mm = -(standoff + STUB_MM)
    bottom_mm = max(known + [12.0]) + 5.0
    half_width_mm = radius + HEAD_WALL_MM
    scale = min(MAX_DRAWING_HEIGHT_PX / (bottom_mm - top_mm), MAX_HALF_WIDTH_PX / half_width_mm)
    scale = max(MIN_PX_PER_MM, min(MAX_PX_PER_MM, scale))
    axis_x = 40.0 + half_width_mm * scale
    origin_y = DRAWING_TOP_PX - top_mm * scale

    def y(mm: float) -> float:
        return origin_y + mm * scale

    def x(mm: float) -> float:
        return axis_x + mm * scale

    drawing_bottom = y(bottom_mm)
    findings = list(result.findings)
    legend_rows = _legend_rows(findings, [f["message"] for f in result_document(result, units)["findings"]])
    legend_height = sum(20.0 + 13.0 * len(lines) for _, _, _, lines in legend_rows)
    height = drawing_bottom + 60.0 + legend_height + 50.0

    svg = _Svg()
    svg.raw(
        f'<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH_PX}" height="{height:.0f}" '
        f'viewBox="0 0 {WIDTH_PX} {height:.0f}" data-px-per-mm="{scale:.6f}" data-origin-y="{origin_y:.6f}" '
        f'data-axis-x="{axis_x:.6f}" data-units={quoteattr(units)} font-family="sans-serif">'
    )
    svg.element("title", f"Plug {plug.thread} {plug.seat} seat in port {port.thread} {port.seat} seat: "
                         f"verdict {result.verdict}")
    svg.raw(_DEFS)
    svg.element("rect", x=0, y=0, width=WIDTH_PX, height=f"{height:.0f}", fill="#ffffff")
    verdict_style = SEVERITY_STYLE.get(result.verdict, {"label": result.verdict.upper(), "colour": "#1b5e20"})
    svg.element("text", f"Plug {plug.thread} ({plug.seat} seat) in port {port.thread} ({port.seat} seat)",
                x=20, y=28, font_size=17, font_weight="bold", fill="#111")
    svg.element("text", f"verdict: {'PASS' if result.verdict == 'pass' else verdict_style['label']}"
                        f"   ·   section along the plug axis, to scale ({_scale_note(scale, units)})",
                x=20, y=48, font_size=12, fill="#333")

    anchors: dict[str, float] = {"seat_face": 0.0, "hex": -standoff - STUB_MM / 2.0}
    roof_x_left, roof_x_right = -half_width_mm, half_width_mm

    # --- the head: hatched material either side of the bore, down to the chamber roof ---
    depth = layout.port_depth
    depth_long = layout.port_depth_long if layout.port_depth_long is not None else depth
    if depth is not None:
        def roof(mm_x: float) -> float:
            return depth + (mm_x + radius) * (depth_long - depth) / diameter

        seat_top = 0.0
        left = [(roof_x_left, seat_top), (-radius, seat_top), (-radius, depth), (roof_x_left, roof(roof_x_left))]
        right = [(radius, seat_top), (roof_x_right, seat_top), (roof_x_right, roof(roof_x_right)), (radius, depth_long)]
        if port.seat == "conical":
            taper = math.tan(math.radians(CONICAL_SEAT_HALF_ANGLE_DEG))
            gauge_r, rise = radius + 1.0, 2.5
            left = [(roof_x_left, -rise), (-(gauge_r + rise * taper), -rise), (-radius, 1.0 / taper),
                    (-radius, depth), (roof_x_left, roof(roof_x_left))]
            right = [(gauge_r + rise * taper, -rise), (roof_x_right, -rise), (roof_x_right, roof(roof_x_right)),
                     (radius, depth_long), (radius, 1.0 / taper)]
        for polygon, side in ((left, "short"), (right, "long")):
            svg.element("polygon", points=" ".join(f"{x(px):.2f},{y(py):.2f}" for px, py in polygon),
                        fill="url(#hatch-head)", stroke="#222", stroke_width=1.4, data_part=f"head-{side}-side")
        # the port's own thread on the bore walls: visible wherever the plug leaves it bare
        thread_top = 1.0 / math.tan(math.radians(CONICAL_SEAT_HALF_ANGLE_DEG)) if port.seat == "conical" else 0.0
        _wall_teeth(svg, x(-radius), y(thread_top), y(depth), -1, 1.25 * scale)
        _wall_teeth(svg, x(radius), y(thread_top), y(depth_long), 1, 1.25 * scale)
        # the chamber surface (roof), drawn across the bore too
        svg.element("line", x1=x(-radius), y1=y(depth), x2=x(radius), y2=y(depth_long), stroke="#555",
                    stroke_width=1.0, stroke_dasharray="10 3 2 3",
                    data_feature="chamber_surface", data_axial_mm=f"{depth:.6f}")
        _feature_tick(svg, "port_depth", depth, x(-radius), y(depth), x(-radius - 2.0))
        _feature_tick(svg, "port_depth_long", depth_long, x(radius), y(depth_long), x(radius + 2.0))
        _label(svg, "chamber surface", x(roof_x_left) + 6, y(roof(roof_x_left)) - 5, italic=True)
        _label(svg, "cylinder head", x(roof_x_left) + 6, y(min(depth, 6.0) / 2.0) + 4, bold=True)
    # the seat face (origin): a long dash-dot datum line
    svg.element("line", x1=x(-half_width_mm) - 10, y1=y(0.0), x2=x(half_width_mm) + 10, y2=y(0.0),
                stroke="#000", stroke_width=1.0, stroke_dasharray="14 3 3 3",
                data_feature="seat_face", data_axial_mm="0")

    # --- piston crown at top dead centre ---
    if layout.piston is not None:
        anchors["piston_crown"] = layout.piston
        top = y(layout.piston)
        svg.element("rect", x=x(-half_width_mm), y=top, width=2 * half_width_mm * scale,
                    height=max(6.0, drawing_bottom - top), fill="url(#hatch-piston)", stroke="none")
        svg.element("line", x1=x(-half_width_mm), y1=top, x2=x(half_width_mm), y2=top, stroke="#000",
                    stroke_width=2.2, data_feature="piston_crown", data_axial_mm=f"{layout.piston:.6f}")
        _label(svg, "piston crown at TDC", x(-half_width_mm) + 6, top + 16, bold=True)

    # --- valve at its closest approach: rim at the given depth, head below, stem above ---
    if layout.valve is not None:
        anchors["valve"] = layout.valve
        rim = y(layout.valve)
        left_edge, right_edge = x(radius + 0.8), x(half_width_mm - 0.8)
        stem = (left_edge + right_edge) / 2.0
        disc = 1.8 * scale
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

    # --- gasket (flat seat) ---
    if plug.seat == "flat" and layout.standoff:
        gasket_top = y(-standoff)
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

    # --- the plug, in section: shell walls, insulator, electrodes ---
    _plug_section(svg, plug, layout, radius, hex_half, standoff, scale, x, y)
    if layout.thread_end is not None:
        anchors["thread_end"] = layout.thread_end
        anchors["thread"] = layout.thread_end / 2.0
    if layout.tip is not None:
        anchors["tip"] = layout.tip

    # --- dimensions, to the right of the head ---
    dims = _dimensions(result, layout, units)
    column_x = x(half_width_mm) + 28.0
    label_x = column_x + 18.0 * max(1, len(dims)) + 12.0
    label_ys: list[float] = []
    for index, (name, start_mm, end_mm, text) in enumerate(dims):
        dx = column_x + 18.0 * index
        y0, y1 = y(start_mm), y(end_mm)
        for ext in (y0, y1):
            svg.element("line", x1=x(radius), y1=ext, x2=dx + 4, y2=ext, stroke="#777", stroke_width=0.6,
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
        placed = max([wanted] + [ly + 30.0 for ly in label_ys if ly > wanted - 30.0])
        label_ys.append(placed)
        svg.element("line", x1=dx, y1=(y0 + y1) / 2.0, x2=label_x - 4, y2=placed - 4, stroke="#999",
                    stroke_width=0.6)
        first, _, second = text.partition("\n")
        svg.element("text", first, x=label_x, y=placed, font_size=12, fill="#111", font_weight="bold")
        if second:
            svg.element("text", second, x=label_x, y=placed + 13, font_size=10.5, fill="#333")

    # --- finding markers on the drawing ---
    marker_offsets: dict[str, int] = {}
    for number, finding in enumerate(_listed(findings), start=1):
        if finding.code == "NOT_CHECKED":
            continue
        anchor = CHECK_ANCHORS.get(finding.check)
        if anchor not in anchors:
            anchor = "seat_face"
        count = marker_offsets.get(anchor, 0)
        marker_offsets[anchor] = count + 1
        mx, my = x(-half_width_mm) - 18.0, y(anchors[anchor]) + 19.0 * count
        my = min(max(my, DRAWING_TOP_PX), drawing_bottom)
        svg.element("line", x1=mx + 8, y1=my, x2=x(-radius), y2=y(anchors[anchor]),
                    stroke=SEVERITY_STYLE[finding.severity]["colour"], stroke_width=1.2,
                    stroke_dasharray=SEVERITY_STYLE[finding.severity]["dash"] or None)
        _symbol(svg, finding.severity, mx, my, str(number))

    # --- scale bar ---
    bar_mm = 5.0 if units == "metric" else MM_PER_INCH / 4.0
    bar_label = "5 mm" if units == "metric" else "1/4 in"
    bx, by = 40.0, drawing_bottom + 24.0
    svg.element("rect", x=bx, y=by - 4, width=bar_mm * scale, height=6, fill="#000", data_scale_bar_mm=f"{bar_mm:.4f}")
    svg.element("text", bar_label, x=bx + bar_mm * scale + 6, y=by + 2, font_size=11, fill="#111")

    # --- legend ---
    ly = drawing_bottom + 52.0
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
    svg.raw("</svg>")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + "\n".join(svg.parts) + "\n"


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


def _plug_section(svg: _Svg, plug: PlugSpec, layout: AxialLayout, radius: float, hex_half: float,
                  standoff: float, scale: float, x, y) -> None:
    """The plug cut along its axis: shell walls (hex stub and thread), the insulator and
    its nose, the centre electrode and the ground electrode, ending at the tip position.

    Wall thickness, insulator and electrode sizes are schematic; the seat, thread end and
    tip are at their computed positions.
    """
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


def _dimensions(result: FitResult, layout: AxialLayout, units: str) -> list[tuple[str, float, float, str]]:
    """(name, from mm, to mm, label) for each margin the drawing dimensions."""
    dims: list[tuple[str, float, float, str]] = []
    geometry = result.geometry
    if layout.port_depth is not None:
        dims.append(("port_depth", 0.0, layout.port_depth,
                     f"port depth {_format_length(layout.port_depth, units)}\nseat face to chamber (short side)"))
    if "thread_protrusion" in geometry and layout.thread_end is not None and layout.port_depth is not None:
        entry = geometry["thread_protrusion"]
        name = "thread protrusion" if entry.nominal >= 0 else "thread recess"
        dims.append(("thread_protrusion", layout.port_depth, layout.thread_end,
                     _bounds_text(name, entry, units, signed=True)))
    if "piston_margin" in geometry and layout.tip is not None and layout.piston is not None:
        dims.append(("piston_margin", layout.tip, layout.piston,
                     _bounds_text("piston margin", geometry["piston_margin"], units)))
    if "valve_margin" in geometry and layout.tip is not None and layout.valve is not None:
        dims.append(("valve_margin", layout.tip, layout.valve,
                     _bounds_text("valve margin", geometry["valve_margin"], units)))
    return dims


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
