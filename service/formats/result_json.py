"""The result document as the contract writes it, and as JSON: for the web, the batch,
the command line and the drawing.

`result_document` turns the engine's `FitResult` into the contract's result document
(`schemas.results.FitResultSchema` documents it; a test loads this module's output
through that schema). It is plain Python rather than a marshmallow dump, and JSON is
written by orjson rather than the standard library, because a build list of 10,000
lines must be written in milliseconds (benchmarks/bench_batch.py).

JSON comes out as compact UTF-8 bytes. A batch answer is put together from the JSON of
its items (`batch_item_json`, `batch_answer_json`), so a result document shared by many
lines is written once.
"""
from __future__ import annotations

import math
import re
from collections.abc import Mapping
from functools import lru_cache
from typing import Any

import orjson

from schemas.results import UNIT_SYSTEMS
from service.fitment.catalog import TURN_ANGLE_NOTES
from service.fitment.model import FitResult
from service.units import from_canonical, output_unit

# Digits kept in numbers, per output unit: 0.001 mm (a micrometre, finer than any gauge
# that measures a plug or a port; the engine keeps full precision), and 0.00001 in (a
# quarter of a micrometre, so an inch figure loses nothing a millimetre figure keeps).
_DIGITS = {"mm": 3, "in": 5}
_MESSAGE_FORMAT = {"mm": "{:.2f} mm", "in": "{:.3f} in", "N*m": "{:.1f} N*m", "lbf*ft": "{:.1f} lbf*ft",
                   "kV": "{:.1f} kV", "bar": "{:.2f} bar", "psi": "{:.1f} psi", "N": "{:.0f} N",
                   "lbf": "{:.0f} lbf", "MPa": "{:.0f} MPa", "mm**2": "{:.1f} mm**2", "in**2": "{:.4f} in**2",
                   "K": "{:.0f} K", "deg": "{:.1f} deg", "rpm": "{:.0f} rpm", "g": "{:.0f} g", "": "{:.2f}"}
# Steps numbers are rounded to where a person reads them (messages, the text report), per
# output unit: torque wrenches in lbf·ft are read to half a unit, lengths in inches to a
# thousandth. The JSON values keep their full digits.
DISPLAY_STEPS = {"lbf*ft": 0.5, "in": 0.001}
# The ends of a range shown in a coarser step are rounded inwards, so the range shown lies
# inside the range checked: a torque read off the shown top (or the shown fail threshold)
# is never above the real one.
_RANGE_END_DIRECTION = {"min": 1, "max": -1, "fail_above": -1}


def display_quantity(value: float, unit: str, direction: int = 0) -> str:
    """A number and its unit as a person reads it: rounded to the unit's display step,
    to the nearest step, or up (direction 1) or down (-1) for the ends of a range."""
    step = DISPLAY_STEPS.get(unit)
    if step is not None:
        steps = value / step
        whole = math.ceil(steps - 1e-9) if direction > 0 else math.floor(steps + 1e-9) if direction < 0 \
            else round(steps)
        value = whole * step
    return _MESSAGE_FORMAT.get(unit, "{:g} " + unit).format(value).rstrip()


def display_value(name: str, quantity: dict[str, Any]) -> str:
    """A named value of a finding or an analysis as a person reads it (`display_quantity`,
    the ends of a range rounded inwards)."""
    return display_quantity(quantity["value"], quantity["unit"], _RANGE_END_DIRECTION.get(name, 0))


@lru_cache(maxsize=64)
def _converter(kind: str, system: str) -> tuple[str, float, float, int]:
    """(output unit, scale, offset, digits) for one kind in one unit system, worked out
    once: a result carries dozens of quantities and a batch thousands of results."""
    unit = output_unit(kind, system)
    offset = from_canonical(0.0, kind, system)
    scale = from_canonical(1.0, kind, system) - offset
    return unit, scale, offset, _DIGITS.get(unit, 4)


class _Converters(dict):
    """`_converter` for one unit system as a plain dict lookup (kind -> conversion):
    a result has some fifty quantities, a batch tens of thousands of results."""

    def __init__(self, system: str) -> None:
        super().__init__()
        self.system = system

    def __missing__(self, kind: str) -> tuple[str, float, float, int]:
        conversion = self[kind] = _converter(kind, self.system)
        return conversion


_CONVERTERS = {system: _Converters(system) for system in UNIT_SYSTEMS}


def quantity_document(value: float | None, kind: str, system: str) -> dict[str, Any] | None:
    """One quantity of an answer, `{"value", "unit"}`, in the unit system's output unit."""
    if value is None:
        return None
    unit, scale, offset, digits = _CONVERTERS[system][kind]
    return {"value": round(value * scale + offset, digits) + 0.0, "unit": unit}


# A figure a text states in metric units: a number (or a range such as 1.0-1.5) and its unit.
_STATED_FIGURE = re.compile(r"(-?\d+(?:\.\d+)?)(?:-(\d+(?:\.\d+)?))?\s?(mm|N\*m|N·m|bar)\b")
_STATED_KINDS = {"mm": "length", "N*m": "torque", "N·m": "torque", "bar": "pressure"}


def _restated(match: re.Match, system: str) -> str:
    kind = _STATED_KINDS[match.group(3)]
    unit, scale, offset, _ = _CONVERTERS[system][kind]
    shown = [_MESSAGE_FORMAT[unit].format(float(number) * scale + offset).removesuffix(" " + unit)
             for number in match.groups()[:2] if number is not None]
    return "-".join(shown) + " " + unit


@lru_cache(maxsize=4096)
def in_units(text: str, system: str) -> str:
    """A sentence with the figures it states in metric units (assumptions, fixed messages)
    restated in `system`'s units. Only figures outside parentheses are restated: a
    parenthesis cites a source, which is quoted as published."""
    if system == "metric" or not _STATED_FIGURE.search(text):
        return text
    pieces, depth, start = [], 0, 0
    for index, character in enumerate(text + "("):
        if character in "()":
            segment = text[start:index]
            if depth == 0:
                segment = _STATED_FIGURE.sub(lambda match: _restated(match, system), segment)
            pieces.append(segment)
            depth = max(0, depth + (1 if character == "(" else -1))
            start = index
    return "".join(pieces)


def render_message(template: str, values: dict[str, dict[str, Any]]) -> str:
    """Fill `{name}` placeholders with the finding's values in the output units."""
    if "{" not in template:
        return template
    text = template
    for name, quantity in values.items():
        placeholder = "{" + name + "}"
        if placeholder in text:
            text = text.replace(placeholder, display_value(name, quantity))
    return text


def _quantities(values: Mapping[str, tuple | str], converters: _Converters) -> dict[str, Any]:
    """A finding's or an analysis's values in the output units; a value that carries its
    grade and source (`model.SourcedValue`) keeps them, and a name (the piston margin's
    governing feature) is written as it is."""
    out: dict[str, Any] = {}
    for name, quantity in values.items():
        if isinstance(quantity, str):
            out[name] = quantity
            continue
        unit, scale, offset, digits = converters[quantity[1]]
        entry = out[name] = {"value": round(quantity[0] * scale + offset, digits), "unit": unit}
        if len(quantity) == 4:
            entry["grade"], entry["source"] = quantity[2], quantity[3]
    return out


def result_document(result: FitResult, system: str = "metric", shared: dict | None = None) -> dict[str, Any]:
    """The contract's result document for one check, in metric or imperial units.

    `shared`, when given, is an intern table for one batch: the parts that repeat from
    result to result (findings without values such as NOT_CHECKED, the torque guide,
    the assumptions and cautions) are then one read-only object each, built once per
    batch rather than once per line. Callers must not mutate the document.
    """
    if shared is None:
        shared = {}
    converters = _CONVERTERS[system]
    metric = system == "metric"  # the engine writes its sentences in metric units
    findings = []
    for finding in result.findings:
        finding_values = finding.values
        if not finding_values:
            key = ("finding", finding.code, finding.check, finding.severity, finding.message)
            document = shared.get(key)
            if document is None:
                message = finding.message if metric else in_units(finding.message, system)
                document = shared[key] = {"code": finding.code, "check": finding.check,
                                          "severity": finding.severity, "message": message, "values": {}}
            findings.append(document)
            continue
        values = _quantities(finding_values, converters)
        message = render_message(finding.message, values)
        findings.append({"code": finding.code, "check": finding.check, "severity": finding.severity,
                         "message": message if metric else in_units(message, system), "values": values})
    torque = None
    guide = result.torque
    if guide is not None:
        key = ("torque", system, guide.min_nm, guide.max_nm, guide.lubrication, guide.seat, guide.turn_angle_deg,
               guide.reused_gasket_turn_angle_deg, guide.source)
        torque = shared.get(key)
        if torque is None:
            unit, scale, _, digits = _converter("torque", system)
            torque = shared[key] = {"min": round(guide.min_nm * scale, digits),
                                    "max": round(guide.max_nm * scale, digits), "unit": unit,
                                    "lubrication": guide.lubrication, "turn_angle_deg": guide.turn_angle_deg,
                                    "turn_angle_note": TURN_ANGLE_NOTES[guide.seat],
                                    "reused_gasket_turn_angle_deg": guide.reused_gasket_turn_angle_deg,
                                    "source": guide.source}
    key = ("assumptions", *result.assumptions)
    assumptions = shared.get(key)
    if assumptions is None:
        assumptions = shared[key] = list(result.assumptions) if metric else \
            [in_units(text, system) for text in result.assumptions]
    key = ("cautions", *result.cautions)
    cautions = shared.get(key)
    if cautions is None:
        cautions = shared[key] = list(result.cautions)
    unit, scale, _, digits = converters["length"]
    geometry = {}
    for name, (nominal, low, high, rss_low, rss_high) in result.geometry.items():
        shown = round(nominal * scale, digits)
        if low == nominal == high == rss_low == rss_high and nominal:
            # No tolerances (most lines): five equal numbers, rounded once. Zero is left
            # to the general case, where -0.0 and 0.0 keep their own signs.
            geometry[name] = {"nominal": shown, "min": shown, "max": shown, "rss_min": shown, "rss_max": shown,
                              "unit": unit}
            continue
        geometry[name] = {"nominal": shown, "min": round(low * scale, digits),
                          "max": round(high * scale, digits), "rss_min": round(rss_low * scale, digits),
                          "rss_max": round(rss_high * scale, digits), "unit": unit}
    analysis = {check: _quantities(quantities, converters) for check, quantities in result.analysis.items()}
    return {
        "verdict": result.verdict,
        "thread": result.thread,
        "findings": findings,
        "geometry": geometry,
        "analysis": analysis,
        "torque": torque,
        "assumptions": assumptions,
        "cautions": cautions,
        "engine_version": result.engine_version,
        "catalog_version": result.catalog_version,
    }


# --- JSON ---------------------------------------------------------------------------------


def to_json(document: Any, *, indented: bool = False) -> bytes:
    """JSON as UTF-8, compact (or indented by two spaces, for people), of a document made
    of dicts, lists, tuples, strings, numbers, booleans and None. Integer keys (the
    positions marshmallow gives list items in its error messages) are written as
    strings, as the standard library writes them."""
    option = orjson.OPT_NON_STR_KEYS | (orjson.OPT_INDENT_2 if indented else 0)
    return orjson.dumps(document, option=option)


def from_json(text: bytes | str) -> Any:
    return orjson.loads(text)


def batch_item_json(own: dict[str, Any], document_json: bytes) -> bytes:
    """One checked line of a batch answer: the line's own members (`ref`, and `line` for
    CSV), then those of its result document (`document_json`, as `to_json` wrote it):
    `{**own, **document}` as JSON, with the document written once for all the lines
    that share it."""
    return to_json(own)[:-1] + b"," + document_json[1:]


def batch_answer_json(summary: dict[str, Any], results: list[bytes]) -> bytes:
    """The batch answer `{"summary": ..., "results": [...]}` from its items' JSON."""
    return b"".join((b'{"summary":', to_json(summary), b',"results":[', b",".join(results), b"]}"))
