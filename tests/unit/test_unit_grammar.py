"""The quantity grammar (service.units.QUANTITY_GRAMMAR) in front of pint.

Property: any text either reads as the same value as it did when pint evaluated every
string itself, or is refused (UnitError) in under 10 ms, the denial-of-service strings
of issue 12 included. The one deliberate change: a mixed number such as `1 1/4 in`,
which pint alone read as 1 × 1/4 in (a quarter inch), now reads as one and a quarter.
"""
from __future__ import annotations

import math
import time

import pytest
from hypothesis import HealthCheck, given, seed, settings
from hypothesis import strategies as st

from service import units
from service.units import KINDS, MAX_QUANTITY_TEXT, QUANTITY_GRAMMAR, UnitError, parse_quantity
from tests.unit_strings import unit_strings

parse_uncached = parse_quantity.__wrapped__
REFUSAL_BUDGET_S = 0.010  # issue 12: a refusal takes under 10 ms


def reading_before_the_grammar(text: str, kind_name: str) -> float:
    """How text was read before the grammar: a plain number, else pint evaluated the
    text with the trade spellings rewritten (run here only on text the grammar passed,
    so it cannot hang)."""
    kind = KINDS[kind_name]
    try:
        return units.convert(float(text), kind.bare, kind.canonical)
    except ValueError:
        pass
    normalised = units._normalise(text, kind)
    try:
        return units.convert(float(normalised), kind.bare, kind.canonical)
    except ValueError:
        pass
    reg = units.registry()
    quantity = reg.Quantity(normalised)
    if kind.name == "angle" and quantity.dimensionless:
        return float(quantity.to("deg").magnitude)
    return float(quantity.to(kind.canonical).magnitude)


def mixed_number_value(text: str, kind_name: str) -> float | None:
    """What a mixed number means, read as its decimal would be (`1 1/4 in` as `1.25 in`,
    so offset units such as degF are read alike), or None for any other text."""
    kind = KINDS[kind_name]
    match = QUANTITY_GRAMMAR.fullmatch(units._normalise(text, kind))
    if match is None or match["whole"] is None:
        return None
    magnitude = int(match["whole"]) + int(match["numerator"]) / int(match["denominator"])
    return reading_before_the_grammar(f"{match['sign']}{magnitude!r} {match['unit']}", kind_name)


def fastest_refusal(text: str, kind: str) -> float:
    """The quickest of three refusals (a shared machine's pauses are not the parser's)."""
    timings = []
    for _ in range(3):
        started = time.perf_counter()
        with pytest.raises(UnitError):
            parse_uncached(text, kind)
        timings.append(time.perf_counter() - started)
    return min(timings)


@pytest.fixture(scope="module", autouse=True)
def _registry_built():
    units.registry()  # built once per process (about a second); not a refusal's cost


@seed(20250112)
@settings(max_examples=3000, deadline=None, database=None, suppress_health_check=[HealthCheck.too_slow])
@given(text=unit_strings(), kind=st.sampled_from(sorted(KINDS)))
def test_every_text_reads_as_before_or_is_refused_in_under_10_ms(text, kind):
    try:
        value = parse_uncached(text, kind)
    except UnitError:
        assert fastest_refusal(text, kind) < REFUSAL_BUDGET_S, f"{text!r} took too long to refuse"
        return
    assert math.isfinite(value)
    mixed = mixed_number_value(text, kind)
    if mixed is not None:
        assert value == pytest.approx(mixed, rel=1e-12)
    else:
        assert value == reading_before_the_grammar(text, kind)


@pytest.mark.parametrize("text", [
    "9**9**8 mm", "9**9**7 mm", "(19 mm)**1000", "10**10000 mm", "2**2**20 mm",  # issue 12's reproductions
    "19 mm + 1 mm", "(19 mm)", "19 mm-mm", "1_000 mm", "\u0661\u0669 mm", "19 mm**4", "0x13 mm",
])
def test_expressions_beyond_the_grammar_are_refused_with_the_accepted_forms(text):
    with pytest.raises(UnitError, match=r"cannot read .* such as 19, '19 mm', '0\.75 in', '3/4 in' or '1 1/4 in'"):
        parse_quantity(text, "length")
    assert fastest_refusal(text, "length") < REFUSAL_BUDGET_S


def test_text_over_the_cap_has_its_own_message_and_is_not_echoed():
    text = "1" + "0" * 5000 + " mm"
    with pytest.raises(UnitError, match=f"at most {MAX_QUANTITY_TEXT} characters") as refusal:
        parse_quantity(text, "length")
    assert "0000000000" not in str(refusal.value)
    assert len("0.75 in") < MAX_QUANTITY_TEXT  # the cap leaves every ordinary form room


@pytest.mark.parametrize(("text", "kind", "expected"), [
    ("1 1/4 in", "length", 31.75),        # 1.25 in x 25.4 mm/in (NIST SP 811, 2008, B.8)
    ('-1 1/2"', "length", -38.1),          # the inch mark is an inch
    ("2 3/4 in", "length", 69.85),
    ("3/4 in", "length", 19.05),
    ("19 mm²", "length", None),            # an area is not a length (a refusal, below)
    ("1 in**2/in", "length", 25.4),        # exponents up to 3 are read as pint reads them
    ("18 ft-lb", "torque", 18 * 1.355818), # NIST SP 811 B.8: 1 lbf·ft = 1.355 818 N·m
    ("45 °C", "temperature", 318.15),      # 0 degC = 273.15 K (NIST SP 811, 4.2.1.1)
])
def test_accepted_forms_read_as_the_trade_means_them(text, kind, expected):
    if expected is None:
        with pytest.raises(UnitError, match="not a length"):
            parse_quantity(text, kind)
        return
    assert parse_quantity(text, kind) == pytest.approx(expected, abs=5e-6)


def test_a_fraction_without_a_unit_is_refused_rather_than_read_as_millimetres():
    # "3/4" on a parts counter means three-quarter inch; as millimetres it would be a
    # silent misreading, so it is refused and the unit asked for.
    with pytest.raises(UnitError, match="fraction without a unit"):
        parse_quantity("3/4", "length")


def test_a_number_that_overflows_in_conversion_is_refused():
    with pytest.raises(UnitError, match="finite"):
        parse_quantity("1e308 in", "length")  # 2.54e309 mm is past the largest float
    with pytest.raises(UnitError, match="finite"):
        units.check_finite(10 ** 400, "length")  # an int too large for a float
