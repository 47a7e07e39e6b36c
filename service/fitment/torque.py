"""Installation torque: the recommended range for the stated lubrication, and where a
planned torque lies against it.

The catalogue's ranges are for clean, dry threads. A lubricated thread reaches the same
preload at a lower torque: by the short-form torque–tension relation `T = K·F·d`
(Shigley's *Mechanical Engineering Design*, Budynas & Nisbett, 9th ed., eq. 8-27; the
edition from memory) the torque for a given preload is
proportional to the nut factor K, so the range for a lubricant is the dry range times
`K(lubricant) / K(dry)` (Shigley's table 8-15: anti-seize 0.12 / 0.20 = 0.6, oiled
0.18 / 0.20 = 0.9; the trade's rule of thumb, 20–30 % less with anti-seize, is milder).
A taper seat raises K for every lubricant alike, so the ratio holds for both seats.

A planned torque is compared with the range as its source states it (`StatedRange`):
converted into the source's unit, brought back to the dry torque that gives the same
preload, and taken as inside the range when it rounds to an end of it at the source's
own precision. Above the top of the range by more than half is a fail (the contract):
the shell stretches and the seal is lost. Shell stretch itself is not modelled: no
published source gives the dimensions of a plug shell's thinnest section.

Pure floats in N·m; guidance only: the engine maker's data comes first.
"""
from __future__ import annotations

from dataclasses import replace
from typing import NamedTuple

from .catalog import TorqueGuide
from .model import SourcedValue, Value
from .strength import NUT_FACTOR_BY_LUBRICATION

# Fail when the planned torque is above the top of the range by more than half (the
# contract's TORQUE_OUT_OF_RANGE rule).
FAIL_ABOVE_FACTOR = 1.5

# What a lubrication is called in a sentence ("... with clean, dry threads").
LUBRICATION_WORDS = {"dry": "clean, dry threads", "oiled": "oiled threads",
                     "anti_seize": "anti-seize on the threads"}

# Where a planned torque lies against the range.
BELOW, WITHIN, ABOVE, FAR_ABOVE = "below", "within", "above", "far_above"

# A hair of floating-point slack, so a torque typed as exactly the end of a range (or its
# conversion back) is inside it.
_SLACK = 1e-9


def lubrication_ratio(lubrication: str) -> float:
    """K(lubrication) / K(dry): the share of the dry torque that gives the dry preload."""
    # Shigley eq. 8-27: T = K·F·d, so at equal preload F, T_lub / T_dry = K_lub / K_dry
    return NUT_FACTOR_BY_LUBRICATION[lubrication] / NUT_FACTOR_BY_LUBRICATION["dry"]


def lubricated(guide: TorqueGuide, lubrication: str) -> TorqueGuide:
    """The guide's range lowered for `lubrication` ("dry" gives the guide itself)."""
    if lubrication == "dry":
        return guide
    ratio = lubrication_ratio(lubrication)
    percent = round((1.0 - ratio) * 100.0)
    note = (f"; lowered {percent} % for {LUBRICATION_WORDS[lubrication]}: the dry range x {ratio:g} = "
            f"K {NUT_FACTOR_BY_LUBRICATION[lubrication]:g} / {NUT_FACTOR_BY_LUBRICATION['dry']:g} (Shigley, "
            "Mechanical Engineering Design, 9th ed., table 8-15; published), the torque giving the dry preload")
    if lubrication == "anti_seize":
        note += "; the trade's rule of thumb is 20-30 % less (common practice)"
    return replace(guide, min_nm=guide.min_nm * ratio, max_nm=guide.max_nm * ratio, lubrication=lubrication,
                   source=guide.source + note)


class TorqueLimits(NamedTuple):
    """A guide's range for one lubrication, worked out once per guide: the lowered guide,
    the thresholds a planned torque is compared with, in the unit its source states the
    range in (see `place`), and the analysis values that depend on the range alone."""

    guide: TorqueGuide  # lowered for the lubrication
    lubrication_ratio: float  # K(lubrication) / K(dry)
    newton_metres_per_stated_unit: float  # a planned N·m over this is its dry equivalent in the source's unit
    low: float  # the bottom of the stated range less half a step of its last digit
    high: float  # the top plus half a step
    fail_above: float  # half again the top (no half step: the contract's threshold)
    values: dict[str, Value | SourcedValue]  # min, max, fail_above (N·m) and the nut-factor ratio; shared


# The ranges of each guide, made on first use and shared by every check of a build list.
# Keyed by the guide itself (guides hash by identity); cleared if a process loads catalogue
# after catalogue, so it cannot grow without bound.
_LIMITS: dict[TorqueGuide, dict[str, TorqueLimits]] = {}
_LIMITS_KEPT = 1024

FAIL_ABOVE_SOURCE = (
    "common practice",
    ("the contract's rule: above the top of the range by more than half the torque fails (shell stretch, lost "
    "seal); shell stretch itself is not modelled: no published source gives the dimensions of a plug shell's "
    "thinnest section"))


def torque_limits(guide: TorqueGuide) -> dict[str, TorqueLimits]:
    """The ranges of a dry-thread guide for every lubrication, with their thresholds."""
    limits = _LIMITS.get(guide)
    if limits is None:
        if len(_LIMITS) >= _LIMITS_KEPT:
            _LIMITS.clear()
        limits = _LIMITS[guide] = {lubrication: _limits(guide, lubrication) for lubrication in LUBRICATION_WORDS}
    return limits


def _limits(guide: TorqueGuide, lubrication: str) -> TorqueLimits:
    lowered = lubricated(guide, lubrication)
    ratio = lubrication_ratio(lubrication)
    stated = guide.stated
    if stated is None:  # a guide built without its source's form: exact N·m, no rounding step
        per_unit, low, high, top = ratio, guide.min_nm, guide.max_nm, guide.max_nm
    else:
        half_step = stated.resolution / 2.0
        per_unit = ratio * stated.newton_metres_per_unit
        low, high, top = stated.min - half_step, stated.max + half_step, stated.max
    fail_above = top * FAIL_ABOVE_FACTOR
    values: dict[str, Value | SourcedValue] = {
        "min": (lowered.min_nm, "torque"), "max": (lowered.max_nm, "torque"),
        "fail_above": (fail_above * per_unit, "torque", *FAIL_ABOVE_SOURCE),
        "nut_factor_ratio": (ratio, "ratio", "published",
                             (f"nut factor K {NUT_FACTOR_BY_LUBRICATION[lubrication]:g} ({LUBRICATION_WORDS[lubrication]}) "
                             f"/ {NUT_FACTOR_BY_LUBRICATION['dry']:g} (clean, dry threads), Shigley, Mechanical "
                             "Engineering Design, 9th ed., table 8-15"))}
    return TorqueLimits(lowered, ratio, per_unit, low, high, fail_above, values)


def place(planned_nm: float, limits: TorqueLimits) -> str:
    """Where a planned torque lies against the range: BELOW, WITHIN, ABOVE or FAR_ABOVE.

    Compared as the dry torque that gives the same preload, in the unit the range's source
    states it in and at that source's precision: whatever rounds to an end of the range at
    its last printed digit is inside it (26 lbf·ft = 35.25 N·m reads 35 against 25–35 N·m).
    """
    value = planned_nm / limits.newton_metres_per_stated_unit
    if value < limits.low - _SLACK:
        return BELOW
    if value <= limits.high + _SLACK:
        return WITHIN
    if value > limits.fail_above + _SLACK:
        return FAR_ABOVE
    return ABOVE
