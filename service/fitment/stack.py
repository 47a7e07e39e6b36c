"""Tolerance stack-up along the plug axis.

A `Stack` is a signed sum of independent toleranced lengths, carried as its nominal,
the worst-case excursions up and down, and the sums of their squares for the
root-sum-square (statistical) bounds. Chaining `+` and `-` keeps each input length
counted once, which is why seat-to-piston is an alternative input rather than a sum
of port depth and clearance: the port depth's tolerance must not count twice.

A tuple subclass because the engine builds a dozen per check and a hundred thousand
checks a second is the goal: `tuple.__new__` is the cheapest object Python makes.
"""
from __future__ import annotations

from math import sqrt
from typing import NamedTuple

_new = tuple.__new__


class Bounds(NamedTuple):
    """One geometry entry: nominal, worst-case and root-sum-square bounds, in mm.

    A NamedTuple rather than a frozen dataclass: several are built per check, and a
    tuple is three times cheaper to make."""

    nominal: float
    min: float
    max: float
    rss_min: float
    rss_max: float


class Stack(NamedTuple):
    """A signed sum of toleranced lengths. `+` and `-` take another stack (a `Dim` is one),
    or a plain float for an exact length (an allowance, a computed offset): the formulas
    then read as the contract writes them, `O - e - r·tan θ - a`."""

    nominal: float
    up: float = 0.0
    down: float = 0.0
    up_sq: float = 0.0
    down_sq: float = 0.0

    @staticmethod
    def of(dim: Stack) -> Stack:
        # A Dim is already a one-term stack (see model.Dim); this only drops its type.
        return _new(Stack, dim)

    @staticmethod
    def exact(value: float) -> Stack:
        return _new(Stack, (value, 0.0, 0.0, 0.0, 0.0))

    def __add__(self, other: Stack | float) -> Stack:  # type: ignore[override]
        if isinstance(other, tuple):  # another stack (a Dim is one)
            return _new(Stack, (self[0] + other[0], self[1] + other[1], self[2] + other[2],
                                self[3] + other[3], self[4] + other[4]))
        return _new(Stack, (self[0] + other, self[1], self[2], self[3], self[4]))  # exact: the nominal moves

    def __sub__(self, other: Stack | float) -> Stack:
        if isinstance(other, tuple):
            # Subtracting a length turns its plus tolerance into a downward excursion.
            return _new(Stack, (self[0] - other[0], self[1] + other[2], self[2] + other[1],
                                self[3] + other[4], self[4] + other[3]))
        return _new(Stack, (self[0] - other, self[1], self[2], self[3], self[4]))

    def bounds(self) -> Bounds:
        """Worst case: every tolerance at its limit, summed linearly (arithmetic stack).
        RSS: nominal -/+ sqrt(sum of squared tolerances), assuming independent, centred
        variation (the usual statistical stack)."""
        nominal, up, down, up_sq, down_sq = self
        return _new(Bounds, (nominal, nominal - down, nominal + up,
                             nominal - sqrt(down_sq) if down_sq else nominal,
                             nominal + sqrt(up_sq) if up_sq else nominal))


def lower_of(first: Bounds, second: Bounds) -> Bounds:
    """The smaller of two quantities, bound by bound: min(X, Y) lies between the smaller
    of their lows and the smaller of their highs."""
    return _new(Bounds, tuple(map(min, first, second)))


ZERO = Stack.exact(0.0)
