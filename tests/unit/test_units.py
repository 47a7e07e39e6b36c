"""Unit parsing at the boundary, checked against NIST SP 811 (2008, appendix B) and,
independently, against scipy.constants (a general-purpose reference library)."""
from __future__ import annotations

import pytest
import scipy.constants as sc

from service.units import UnitError, convert, parse_quantity


def test_an_inch_is_exactly_25_4_millimetres():
    # NIST SP 811 B.8: 1 in = 2.54 cm exactly; scipy.constants.inch = 0.0254 m.
    assert parse_quantity("1 in", "length") == pytest.approx(25.4, rel=1e-15)
    assert parse_quantity("1 in", "length") == pytest.approx(sc.inch * 1000, rel=1e-15)


@pytest.mark.parametrize(("text", "millimetres"), [
    ("3/8 in", 9.525), ("1/2 in", 12.7), ("3/4 in", 19.05),  # trade reaches, exact (NIST SP 811)
    ("0.460 in", 11.684), ("0.708 in", 17.9832),               # conical reaches (common practice)
    ('0.75"', 19.05), ("19 mm", 19.0), ("1.9 cm", 19.0),
])
def test_trade_reaches_convert_to_their_millimetre_values(text, millimetres):
    assert parse_quantity(text, "length") == pytest.approx(millimetres, abs=1e-9)


@pytest.mark.parametrize("spelling", ["1 ft-lb", "1 lb-ft", "1 ft·lbf", "1 lbf·ft", "1 ft lbs", "1 lbf*ft", "1 foot-pound"])
def test_every_trade_spelling_of_a_foot_pound_is_1_355818_newton_metres(spelling):
    # NIST SP 811 B.8: 1 lbf·ft = 1.355 818 N·m; scipy: pound_force x foot.
    value = parse_quantity(spelling, "torque")
    assert value == pytest.approx(1.355818, abs=5e-7)
    assert value == pytest.approx(sc.pound_force * sc.foot, rel=1e-12)


@pytest.mark.parametrize("spelling", ["1 in-lb", "1 lbf·in", "1 lb-in", "1 inch-pound"])
def test_an_inch_pound_is_0_1129848_newton_metres(spelling):
    # NIST SP 811 B.8: 1 lbf·in = 0.112 984 8 N·m.
    value = parse_quantity(spelling, "torque")
    assert value == pytest.approx(0.1129848, abs=5e-8)
    assert value == pytest.approx(sc.pound_force * sc.inch, rel=1e-12)


@pytest.mark.parametrize(("text", "kind", "expected"), [
    ("25", "torque", 25.0), ("25 Nm", "torque", 25.0), ("25 N·m", "torque", 25.0),
    ("1 psi", "pressure", sc.psi / 1e5),       # NIST: 1 psi = 6.894 757 kPa
    ("1 atm", "pressure", 1.01325),            # NIST: 1 atm = 101 325 Pa exactly
    ("760 torr", "pressure", 1.01325),         # NIST: 1 Torr = 101 325/760 Pa
    ("45", "temperature", 318.15),             # bare numbers are degrees Celsius (contract)
    ("45 degC", "temperature", 318.15), ("320 K", "temperature", 320.0),
    ("30", "voltage", 30.0), ("30000 V", "voltage", 30.0),
])
def test_bare_numbers_and_strings_land_in_the_engine_units(text, kind, expected):
    assert parse_quantity(text, kind) == pytest.approx(expected, rel=1e-9)


@pytest.mark.parametrize(("text", "kind", "complaint"), [
    ("3 kg", "length", "not a length"), ("19", "length", None), ("mm", "length", "no number"),
    ("nan mm", "length", "finite"), ("inf in", "length", "finite"), ("18 lb", "torque", "not a torque"),
    ("1 + ", "length", "cannot read"), ("", "length", "empty"),
])
def test_a_quantity_of_the_wrong_kind_or_no_number_is_refused(text, kind, complaint):
    if complaint is None:
        assert parse_quantity(text, kind) == 19.0
        return
    with pytest.raises(UnitError, match=complaint):
        parse_quantity(text, kind)


def test_a_repeated_string_is_parsed_by_pint_only_once():
    parse_quantity.cache_clear()
    for _ in range(100):
        parse_quantity("0.7501 in", "length")
    info = parse_quantity.cache_info()
    assert (info.misses, info.hits) == (1, 99)


def test_conversion_factors_follow_nist():
    assert convert(1.0, "lbf*ft", "N*m") == pytest.approx(1.355818, abs=5e-7)
    assert convert(25.4, "mm", "in") == pytest.approx(1.0, rel=1e-15)


@pytest.mark.parametrize(("text", "kind", "expected"), [
    (" 15.30 ", "torque", 15.3),  # a bare number is in the kind's bare unit: N*m
    ("19", "length", 19.0),  # mm
    ("20", "temperature", 293.15),  # degC, held in K (0 degC = 273.15 K, NIST SP 811, 2008, 4.2.1.1)
])
def test_a_plain_number_string_is_read_in_the_bare_unit(text, kind, expected):
    assert parse_quantity(text, kind) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("text", ["nan", "inf", "-Infinity"])
def test_a_plain_number_string_that_is_not_finite_is_refused(text):
    with pytest.raises(UnitError, match="finite"):
        parse_quantity(text, "torque")
