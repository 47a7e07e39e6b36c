"""Hypothesis strategies for quantity text: what clients write ("0.75 in", "18 ft-lb",
"1 1/4 in") and what an attacker or a confused spreadsheet writes (`9**9**8 mm`,
`(19 mm)**1000`, ten thousand digits, stray unicode). Shared by the grammar's property
test (tests/unit/test_unit_grammar.py) and schemathesis (tests/api/schemathesis_hooks.py).
"""
from __future__ import annotations

from hypothesis import strategies as st

UNIT_NAMES = ("mm", "cm", "m", "in", "inch", "inches", "ft", "foot", "thou", "µm", "μm", '"',
              "N", "Nm", "N*m", "N·m", "N-m", "kN", "lb", "lbs", "lbf", "ft-lb", "lb-ft", "ft·lbf", "lbf·in",
              "in-lb", "foot-pounds", "inch-pound", "bar", "mbar", "psi", "kPa", "MPa", "Pa", "atm", "torr",
              "degC", "°C", "deg C", "degF", "°F", "K", "kV", "V", "deg", "°", "rad", "kg", "s", "Mm")
OPERATORS = ("*", "/", "**", "^", "-", "+", "·", "×", ".", "(", ")", " ", "  ", ",", "e", "E", "_")
ODDITIES = ("nan", "inf", "Infinity", "\u0661\u0669", "²", "³", "\x00", "\t", "\n", "\ufeff", "💥", "%", "'", "=")

_digits = st.text("0123456789", min_size=1, max_size=6)
decimals = st.one_of(
    st.floats(allow_nan=False, allow_infinity=False, width=32).map(repr),
    st.builds(lambda whole, frac: f"{whole}.{frac}", _digits, _digits),
    st.builds(lambda mantissa, exponent: f"{mantissa}e{exponent}", _digits, st.integers(-400, 400)),
)
fractions = st.builds(lambda n, d: f"{n}/{d}", _digits, _digits)
mixed_numbers = st.builds(lambda w, n, d: f"{w} {n}/{d}", _digits, _digits, _digits)
numbers = st.one_of(decimals, fractions, mixed_numbers,
                    st.builds(lambda sign, n: sign + n, st.sampled_from("-+"), decimals))
units = st.one_of(
    st.sampled_from(UNIT_NAMES),
    st.builds(lambda a, op, b: f"{a}{op}{b}", st.sampled_from(UNIT_NAMES), st.sampled_from("*/·"),
              st.sampled_from(UNIT_NAMES)),
    st.builds(lambda name, power: f"{name}**{power}", st.sampled_from(UNIT_NAMES), st.integers(-2, 6)),
)
well_formed = st.builds(lambda number, space, unit: f"{number}{space}{unit}", numbers, st.sampled_from(["", " "]), units)

# The shapes that cost pint seconds or overflow: towers of powers, huge exponents,
# long digit runs, parentheses around a quantity raised to a power.
hostile = st.one_of(
    st.builds(lambda a, b, c, unit: f"{a}**{b}**{c} {unit}", st.integers(2, 99), st.integers(2, 99),
              st.integers(2, 99), st.sampled_from(UNIT_NAMES)),
    st.builds(lambda base, power: f"({base} mm)**{power}", st.integers(2, 99), st.integers(100, 100000)),
    st.builds(lambda power: f"10**{power} mm", st.integers(300, 100000)),
    st.builds(lambda count: "9" * count + " mm", st.integers(60, 6000)),
    st.builds(lambda count: "(" * count + "1 mm" + ")" * count, st.integers(1, 200)),
)
token_soup = st.lists(st.one_of(st.sampled_from(UNIT_NAMES + OPERATORS + ODDITIES), _digits,
                                st.text(max_size=2)), max_size=12).map("".join)


def unit_strings() -> st.SearchStrategy[str]:
    """Any text a quantity field may be sent: well-formed, hostile or noise."""
    return st.one_of(well_formed, hostile, token_soup)
