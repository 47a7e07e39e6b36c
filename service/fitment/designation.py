"""ISO 261 thread designations ("M14x1.25") read into numbers and written back.

Kept apart from the catalogue because the boundary must read a designation before it
knows whether the size is standard (a bare `M14` means the spark-plug pitch, which the
catalogue supplies)."""
from __future__ import annotations

import re
from functools import lru_cache

_DESIGNATION = re.compile(r"^\s*M\s*(\d+(?:\.\d+)?)\s*(?:[x×X*]\s*(\d+(?:\.\d+)?))?\s*$", re.IGNORECASE)


@lru_cache(maxsize=256)
def parse_designation(text: str) -> tuple[float, float | None] | None:
    """(nominal diameter mm, pitch mm or None for a bare size), or None if unreadable."""
    match = _DESIGNATION.match(text)
    if match is None:
        return None
    diameter = float(match.group(1))
    pitch = float(match.group(2)) if match.group(2) else None
    return diameter, pitch


def format_designation(diameter_mm: float, pitch_mm: float) -> str:
    return f"M{diameter_mm:g}x{pitch_mm:g}"
