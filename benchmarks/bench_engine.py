"""How fast the pure engine checks plug/port pairs, and what unit strings cost.

Run: make bench (.venv/bin/pytest benchmarks/bench_engine.py --benchmark-only -p no:cacheprovider -s)
Floor: at least 80,000 plug/port pairs per second on one core with plain-float inputs
(issue 2 set 100,000 before the reach policy and the shell-edge clearance of issue 11,
which chose plain, readable geometry over the last microsecond). The figures measured on
the project's 2-core machine are in docs/performance.md.
"""
from __future__ import annotations

import itertools

import pytest

from service.catalog_loader import load_catalog
from service.fitment import check_fit
from service.fitment.model import Dim, Options, PlugSpec, PortSpec
from service.units import parse_quantity

PAIRS_PER_ROUND = 1000


def _pairs() -> list[tuple[PlugSpec, PortSpec]]:
    """A mix of outcomes: flush passes, long and short reaches, piston contact, seat and
    thread mismatches, with and without tolerances and optional data."""
    plugs = [
        PlugSpec("M14x1.25", "flat", reach=Dim(19.0, 0.254, 0.254), gasket_thickness=Dim(1.5, 0.2, 0.2),
                 firing_end=Dim(4.0, 0.3, 0.3), hex=16.0, resistor=True),
        PlugSpec("M14x1.25", "flat", reach=Dim(12.7), gasket_thickness=Dim(1.5), firing_end=Dim(3.0), hex=20.8),
        PlugSpec("M14x1.25", "conical", reach=Dim(17.5), firing_end=Dim(4.0), hex=16.0, resistor=False),
        PlugSpec("M12x1.25", "flat", reach=Dim(19.0), gasket_thickness=Dim(1.0), firing_end=Dim(3.5), hex=14.0),
        PlugSpec("M14x1.25", "flat", reach=Dim(26.5), firing_end=Dim(5.0)),
    ]
    ports = [
        PortSpec("M14x1.25", "flat", port_depth=Dim(17.5, 0.2, 0.2), piston_clearance=Dim(8.0, 0.3, 0.3),
                 seat_to_valve=Dim(30.0), well_bore=24.0, hex=16.0, resistor_required=True, material="aluminium"),
        PortSpec("M14x1.25", "flat", design_reach=Dim(12.7), piston_clearance=Dim(3.0), material="cast_iron"),
        PortSpec("M14x1.25", "conical", port_depth=Dim(17.5), port_depth_long_side=Dim(18.5),
                 seat_to_piston=Dim(28.0)),
    ]
    pairs = list(itertools.product(plugs, ports))
    return (pairs * (PAIRS_PER_ROUND // len(pairs) + 1))[:PAIRS_PER_ROUND]


@pytest.fixture(scope="module")
def catalog():
    return load_catalog()


def test_engine_checks_plain_float_pairs(benchmark, catalog):
    pairs = _pairs()
    options = Options(torque=27.0)

    def run():
        for plug, port in pairs:
            check_fit(plug, port, options, catalog)

    # 500 rounds (about 5 s): this machine's host slows some seconds and not others, and a
    # median over pytest-benchmark's default 1 s moved by a third between runs.
    benchmark.pedantic(run, rounds=500, warmup_rounds=20)
    # Both figures: the median is what a run sees, the best round what the code costs when
    # nothing else on the machine gets in the way (a shared host's noise only slows rounds).
    stats = benchmark.stats.stats
    median_per_second, best_per_second = PAIRS_PER_ROUND / stats.median, PAIRS_PER_ROUND / stats.min
    benchmark.extra_info["pairs_per_second"] = round(median_per_second)
    benchmark.extra_info["pairs_per_second_best_round"] = round(best_per_second)
    print(f"\nengine: {median_per_second:,.0f} plug/port pairs per second (median round), "
          f"{best_per_second:,.0f} (best round)")


def test_unit_string_parse_with_the_cache(benchmark):
    parse_quantity("0.75 in", "length")
    benchmark(parse_quantity, "0.75 in", "length")


def test_unit_string_parse_without_the_cache(benchmark):
    parse_quantity("0.75 in", "length")  # the registry is built once, outside the timing
    uncached = parse_quantity.__wrapped__
    benchmark(uncached, "0.75 in", "length")
