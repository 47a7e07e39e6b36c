"""The engine's output pinned for the benchmark's fifteen pairs and a few richer ones.

The fixture `fixtures/engine_golden.json` was written by this module (run it as a
script) and is rewritten only when a result is meant to change, in a commit of its own
that says which cases changed verdict and why; so any optimisation that changes a
finding, a message, a value, a geometry bound, the analysis, the assumptions or the
torque guidance fails here. Floats are compared exactly: a speed-up must not move even
the last bit. The expected values are the engine's own earlier output (a regression
pin), not a published source; the published checks live in the other unit tests.
"""
from __future__ import annotations

import itertools
import json
from dataclasses import asdict
from pathlib import Path

import pytest

from service.catalog_loader import load_catalog
from service.fitment import check_fit
from service.fitment.model import Dim, FitResult, HeatRange, HeatRangeBand, Options, PlugSpec, PortSpec, Span
from service.formats.result_json import result_document

GOLDEN = Path(__file__).parent / "fixtures" / "engine_golden.json"

# The benchmark's plugs and ports (benchmarks/bench_engine.py), repeated here so the pin
# does not move if the benchmark's mix is changed.
BENCH_PLUGS = [
    PlugSpec("M14x1.25", "flat", reach=Dim(19.0, 0.254, 0.254), gasket_thickness=Dim(1.5, 0.2, 0.2),
             firing_end=Dim(4.0, 0.3, 0.3), hex=16.0, resistor=True),
    PlugSpec("M14x1.25", "flat", reach=Dim(12.7), gasket_thickness=Dim(1.5), firing_end=Dim(3.0), hex=20.8),
    PlugSpec("M14x1.25", "conical", reach=Dim(17.5), firing_end=Dim(4.0), hex=16.0, resistor=False),
    PlugSpec("M12x1.25", "flat", reach=Dim(19.0), gasket_thickness=Dim(1.0), firing_end=Dim(3.5), hex=14.0),
    PlugSpec("M14x1.25", "flat", reach=Dim(26.5), firing_end=Dim(5.0)),
]
BENCH_PORTS = [
    PortSpec("M14x1.25", "flat", port_depth=Dim(17.5, 0.2, 0.2), piston_clearance=Dim(8.0, 0.3, 0.3),
             seat_to_valve=Dim(30.0), well_bore=24.0, hex=16.0, resistor_required=True, material="aluminium"),
    PortSpec("M14x1.25", "flat", design_reach=Dim(12.7), piston_clearance=Dim(3.0), material="cast_iron"),
    PortSpec("M14x1.25", "conical", port_depth=Dim(17.5), port_depth_long_side=Dim(18.5),
             seat_to_piston=Dim(28.0)),
]
# Invented demo inputs that reach the checks the benchmark's pairs leave NOT_CHECKED
# (gap voltage, heat range, boot) and the other option paths (RSS, lubrication, required).
RICH_PLUGS = [
    PlugSpec("M14x1.25", "flat", reach=Dim(19.0, 0.1, 0.1), gasket_thickness=Dim(1.5, 0.1, 0.1),
             firing_end=Dim(3.0, 0.2, 0.2), hex=16.0, resistor=True, terminal_height=Dim(60.0, 0.5, 0.5),
             heat_range=HeatRange("demo scale", 0.5), gap=1.1),
    PlugSpec("M14x1.25", "flat", reach=Dim(19.0), firing_end=Dim(3.0), hex=16.0, resistor=None,
             terminal_height=Dim(50.0), heat_range=HeatRange("other", 0.45), gap=0.6),
    # No gasket on a flat seat (GASKET_MISSING), and a recessed firing end (the shell edge governs).
    PlugSpec("M14x1.25", "flat", reach=Dim(17.5, 0.2, 0.2), gasket_thickness=Dim(0.0), firing_end=Dim(-0.5)),
]
RICH_PORTS = [
    PortSpec("M14x1.25", "flat", port_depth=Dim(17.5, 0.2, 0.2), seat_to_piston=Dim(26.0, 0.5, 0.5),
             valve_clearance=Dim(6.0), well_bore=21.0, hex=20.8, resistor_required=True,
             heat_range_band=HeatRangeBand("demo scale", 0.6, 0.8), boot_range=Span(62.0, 66.0),
             compression_ratio=12.0, intake_pressure_bar=2.0, ignition_voltage_kv=30.0,
             peak_pressure_bar=90.0, stroke_mm=86.0, rod_length_mm=145.0, spark_advance_deg=25.0),
    PortSpec("M14x1.25", "flat", design_reach=Dim(19.0), piston_clearance=Dim(1.0), compression_ratio=10.0,
             ignition_voltage_kv=25.0, heat_range_band=HeatRangeBand("demo scale", 0.3, 0.5),
             boot_range=Span(40.0, 45.0)),
    # A shallow port under a high peak pressure: little engaged thread, so it may strip.
    PortSpec("M14x1.25", "flat", port_depth=Dim(6.0, 0.1, 0.1), peak_pressure_bar=120.0, well_bore=30.0,
             hex=16.0, resistor_required=False),
    # An inclined roof and an inclined plug: the shell edge and the reach between break-outs.
    PortSpec("M14x1.25", "flat", port_depth=Dim(17.5, 0.1, 0.1), port_depth_long_side=Dim(19.5, 0.1, 0.1),
             piston_clearance=Dim(5.5, 0.2, 0.2), plug_inclination_deg=28.0, material="aluminium"),
    # The running clearance: a steel rod's stretch at speed (engine 2.1.0) ...
    PortSpec("M14x1.25", "flat", port_depth=Dim(17.5, 0.1, 0.1), piston_clearance=Dim(4.5, 0.2, 0.2),
             valve_clearance=Dim(6.0), stroke_mm=86.0, rod_length_mm=145.0, max_rpm=7000.0, rod_material="steel",
             reciprocating_mass_g=600.0, rod_section_area_mm2=150.0),
    # ... and the rule of thumb for a rod of no stated material above the last speed band.
    PortSpec("M14x1.25", "flat", port_depth=Dim(17.5), piston_clearance=Dim(5.0), max_rpm=12_000.0),
]
OPTION_SETS = {
    "torque_27": Options(torque=27.0),
    "defaults": Options(),
    "rss_oiled_required": Options(stack="rss", lubrication="oiled", torque=40.0, gap=0.9,
                                  min_clearance=2.0, flush_tolerance=0.3, dynamic_allowance=0.4,
                                  require=frozenset({"valve", "heat_range", "torque"})),
    "reused_washer_limits": Options(gasket_condition="reused", indexing_washer=0.8, max_protrusion=2.0,
                                    max_recess=1.0),
}


def _cases():
    plugs, ports = BENCH_PLUGS + RICH_PLUGS, BENCH_PORTS + RICH_PORTS
    for (options_name, options), (plug_index, plug), (port_index, port) in itertools.product(
            OPTION_SETS.items(), enumerate(plugs), enumerate(ports)):
        yield f"{options_name}/plug{plug_index}/port{port_index}", plug, port, options


def snapshot(result: FitResult) -> dict:
    """Everything the engine returns, with floats kept exact (JSON writes them by repr)."""
    return {
        "verdict": result.verdict,
        "thread": result.thread,
        "findings": [[f.code, f.check, f.severity, f.message, {k: list(v) for k, v in f.values.items()}]
                     for f in result.findings],
        "geometry": {name: list(bounds) for name, bounds in result.geometry.items()},
        "analysis": {check: {k: v if isinstance(v, str) else list(v) for k, v in values.items()}
                     for check, values in result.analysis.items()},
        "torque": None if result.torque is None else asdict(result.torque),
        "assumptions": list(result.assumptions),
        "cautions": list(result.cautions),
        "engine_version": result.engine_version,
        "catalog_version": result.catalog_version,
        # The document clients read; imperial is the same numbers scaled, so metric is enough.
        "document": result_document(result, "metric"),
    }


def _current() -> dict:
    catalog = load_catalog()
    return {name: snapshot(check_fit(plug, port, options, catalog)) for name, plug, port, options in _cases()}


@pytest.fixture(scope="module")
def golden() -> dict:
    return json.loads(GOLDEN.read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def current() -> dict:
    # Round-trip through JSON so tuples and lists compare alike.
    return json.loads(json.dumps(_current()))


def test_the_pin_covers_every_case_and_every_check_that_finds_something(golden, current):
    assert sorted(current) == sorted(golden)
    codes = {finding[0] for case in golden.values() for finding in case["findings"]}
    assert codes >= {"THREAD_MISMATCH", "SEAT_MISMATCH", "GASKET_MISSING", "INDEXING_WASHER", "REACH_LONG",
                     "REACH_SHORT", "REACH_INCLINED_ROOF", "PISTON_CONTACT",
                     "TOOL_CLEARANCE", "HEX_DIFFERS", "RESISTOR_REQUIRED", "TORQUE_OUT_OF_RANGE",
                     "THREAD_STRIP_RISK", "VALVE_CONTACT", "GAP_VOLTAGE_MARGIN", "HEAT_RANGE_OUT_OF_BAND",
                     "BOOT_ENGAGEMENT", "NOT_CHECKED"}


@pytest.mark.parametrize("case", [name for name, *_ in _cases()])
def test_the_engine_gives_exactly_what_it_gave_before_it_was_tuned(golden, current, case):
    assert current[case] == golden[case]


if __name__ == "__main__":  # regenerate the pin: only when a result is MEANT to change
    # One case per line, so a diff of the pin shows which cases moved.
    lines = [f"{json.dumps(name)}: {json.dumps(value, sort_keys=True, ensure_ascii=False)}"
             for name, value in _current().items()]
    GOLDEN.write_text("{\n" + ",\n".join(lines) + "\n}\n", encoding="utf-8")
