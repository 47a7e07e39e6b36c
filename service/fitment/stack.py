"""Tolerance stack-up along the plug axis.

A `Stack` is a signed sum of independent toleranced lengths, carried as its nominal,
the worst-case excursions up and down, and the sums of their squares for the
root-sum-square (statistical) bounds. Chaining `+` and `-` keeps each input length
counted once, which is why seat-to-piston is an alternative input rather than a sum
of port depth and clearance: the port depth's tolerance must not count twice.
"""
from __future__ import annotations

from math import sqrt

from .model import Bounds, Dim


class Stack:
    __slots__ = ("nominal", "up", "down", "up_sq", "down_sq")

    def __init__(self, nominal: float, up: float = 0.0, down: float = 0.0,
                 up_sq: float = 0.0, down_sq: float = 0.0) -> None:
        self.nominal = nominal
        self.up = up
        self.down = down
        self.up_sq = up_sq
        self.down_sq = down_sq

    @staticmethod
    def of(dim: Dim) -> "Stack":
        return Stack(dim.nominal, dim.plus, dim.minus, dim.plus * dim.plus, dim.minus * dim.minus)

    def __add__(self, other: "Stack") -> "Stack":
        return Stack(self.nominal + other.nominal, self.up + other.up, self.down + other.down,
                     self.up_sq + other.up_sq, self.down_sq + other.down_sq)

    def __sub__(self, other: "Stack") -> "Stack":
        # Subtracting a length turns its plus tolerance into a downward excursion.
        return Stack(self.nominal - other.nominal, self.up + other.down, self.down + other.up,
                     self.up_sq + other.down_sq, self.down_sq + other.up_sq)

    def bounds(self) -> Bounds:
        # Worst case: every tolerance at its limit, summed linearly (ASME Y14.5-style
        # arithmetic stack). RSS: nominal -/+ sqrt(sum of squared tolerances), which
        # assumes independent, centred variation (common statistical stack practice).
        n = self.nominal
        return Bounds(n, n - self.down, n + self.up, n - sqrt(self.down_sq), n + sqrt(self.up_sq))


ZERO = Stack(0.0)
