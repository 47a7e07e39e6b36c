"""How much nearer the head does the piston come at speed than at rest?

A plug's piston margin is measured at rest: crank at top dead centre, every bearing
clearance taken up away from the head. Running, the piston comes closer. The largest
pull towards the head comes at top dead centre of the EXHAUST stroke: the piston's
inertia is at its peak there and, unlike at the firing stroke's top dead centre, no gas
pressure pushes back. That pull

    F = m·r·ω²·(1 + r/l)

(m the reciprocating mass, r the crank radius, half the stroke, ω the crank's angular
speed, l the rod's centre-to-centre length: the slider-crank piston acceleration at top
dead centre, Den Hartog, Mechanical Vibrations, 4th ed., 1956, ch. 5 on reciprocating
engines, from memory; derived exactly in tests/unit/test_running.py) stretches the rod

    δ = F·L/(A·E)

(Hooke's law for a bar of length L = l, section A and Young's modulus E), and takes up
the big-end, piston-pin and main-bearing clearances towards the head. Their sum is the
running allowance, taken from the piston margin as the contract's `dynamic_allowance`.

Where the reciprocating mass or the rod's section is not given, a rule of thumb by rod
material and speed band stands in (common practice, from memory: see RULE_OF_THUMB_MM).

What the estimate leaves out, and the results say so: the rod's thermal growth (large
for aluminium rods), the crank's bending, the piston's rocking and the block's own
growth. ESTIMATES FOR COMPARING CHOICES, not a builder's measurement: the engine and rod
makers' clearance figures, local regulations and licensed practice come first.

Pure floats: rpm, mm, g, mm², MPa (N/mm²), N.
"""
from __future__ import annotations

import math
from typing import NamedTuple

ROD_MATERIALS = ("steel", "aluminium", "titanium")

# Young's moduli, MPa (N/mm²): Shigley's Mechanical Engineering Design (Budynas & Nisbett),
# 9th ed., table A-5, "Physical constants of materials" (from memory, edition and table
# not re-read): carbon steel 30.0 Mpsi = 207 GPa, aluminium (all alloys) 10.4 Mpsi = 71.7 GPa,
# titanium alloys 16.5 Mpsi = 114 GPa.
YOUNGS_MODULUS_MPA = {"steel": 207_000.0, "aluminium": 71_700.0, "titanium": 114_000.0}
YOUNGS_MODULUS_SOURCE = ("Shigley's Mechanical Engineering Design (Budynas & Nisbett), 9th ed., table A-5 "
                         "(from memory)")

# Taken when a head gives a speed but no rod material: the most compliant of the three,
# so the allowance is not underestimated (as an unknown head material is taken as aluminium).
ROD_MATERIAL_ASSUMED = "aluminium"

# Bearing clearances taken up towards the head at exhaust-stroke TDC, mm, each the whole
# diametral oil clearance (an upper bound: the oil film keeps a journal off the far shell):
# big end and main bearings about 0.002 in (0.05 mm) each, a floating piston pin about
# 0.0006 in (0.015 mm). Common practice, from memory; plain bearings, not needle rollers.
BIG_END_CLEARANCE_MM = 0.05
MAIN_BEARING_CLEARANCE_MM = 0.05
PISTON_PIN_CLEARANCE_MM = 0.015
BEARING_CLEARANCE_MM = BIG_END_CLEARANCE_MM + MAIN_BEARING_CLEARANCE_MM + PISTON_PIN_CLEARANCE_MM
BEARING_CLEARANCE_SOURCE = ("big end 0.05 mm + main bearing 0.05 mm + piston pin 0.015 mm, each a whole "
                            "diametral oil clearance (common practice, from memory)")

# The rule of thumb, mm of running allowance (rod growth and bearing clearances together)
# by rod material, for speeds up to each band's top. Common practice, from memory:
# builders allow roughly 0.005-0.010 in (0.13-0.25 mm) with steel rods at high speed,
# about twice that with aluminium rods (they stretch more and grow with heat), titanium
# between. The split into these bands is ours, a step up at each band's top: no
# published table was read. Above the last band the last figure grows with the square
# of the speed, as the inertia load does (derived).
SPEED_BANDS_RPM = (6_000.0, 8_000.0, 10_000.0)
RULE_OF_THUMB_MM = {
    "steel": (0.15, 0.20, 0.25),
    "titanium": (0.20, 0.25, 0.33),
    "aluminium": (0.30, 0.40, 0.50),
}
RULE_OF_THUMB_SOURCE = ("rule of thumb by rod material and speed band: about 0.005-0.010 in with steel rods, "
                        "about twice that with aluminium (common practice, from memory; the bands are ours)")

INERTIA_LOAD_SOURCE = ("F = m·r·ω²·(1 + r/l), the slider-crank inertia at top dead centre (Den Hartog, Mechanical "
                       "Vibrations, 4th ed., ch. 5, from memory)")
ROD_STRETCH_SOURCE = ("δ = F·L/(A·E) over the rod's centre-to-centre length at its smallest section, with E from "
                      + YOUNGS_MODULUS_SOURCE)

ROD_STRETCH, RULE_OF_THUMB = "rod_stretch", "rule_of_thumb"


class RunningAllowance(NamedTuple):
    """The running allowance and how it was found. `method` is ROD_STRETCH (the inertia
    load stretching the rod, plus bearing clearances) or RULE_OF_THUMB; the load, the
    stretch and the bearing share are None for the rule of thumb."""

    method: str
    allowance_mm: float
    rod_material: str
    youngs_modulus_mpa: float
    inertia_load_n: float | None = None
    rod_stretch_mm: float | None = None
    bearing_clearance_mm: float | None = None
    band_top_rpm: float | None = None  # the rule of thumb's band (None above the last)


def angular_speed(rpm: float) -> float:
    """ω in rad/s from revolutions per minute."""
    return rpm * 2.0 * math.pi / 60.0


def inertia_load_n(mass_g: float, stroke_mm: float, rod_length_mm: float, rpm: float) -> float:
    """F = m·r·ω²·(1 + r/l), N: the reciprocating mass's inertia at top dead centre."""
    m = mass_g / 1000.0  # kg
    r = stroke_mm / 2.0 / 1000.0  # m
    rod = rod_length_mm / 1000.0  # m, the l of the formula
    omega = angular_speed(rpm)
    return m * r * omega**2 * (1.0 + r / rod)


def rod_stretch_mm(load_n: float, rod_length_mm: float, section_mm2: float, modulus_mpa: float) -> float:
    """δ = F·L/(A·E), mm (N, mm, mm², N/mm²). Taking the beam's smallest section over the
    whole centre-to-centre length overstates the stretch: on the safe side."""
    return load_n * rod_length_mm / (section_mm2 * modulus_mpa)


def rule_of_thumb_mm(rod_material: str, rpm: float) -> tuple[float, float | None]:
    """The rule of thumb's allowance for this rod at this speed, and its band's top speed
    (None above the last band, where the last figure grows with the square of the speed)."""
    figures = RULE_OF_THUMB_MM[rod_material]
    for top, figure in zip(SPEED_BANDS_RPM, figures, strict=True):
        if rpm <= top:
            return figure, top
    return figures[-1] * (rpm / SPEED_BANDS_RPM[-1]) ** 2, None


def running_allowance(max_rpm: float, rod_material: str | None = None, stroke_mm: float | None = None,
                      rod_length_mm: float | None = None, reciprocating_mass_g: float | None = None,
                      rod_section_area_mm2: float | None = None) -> RunningAllowance:
    """The piston's extra travel towards the head at exhaust-stroke top dead centre, at
    `max_rpm`: rod stretch plus bearing clearances when the mass, the section, the stroke
    and a rod longer than the crank radius are given, else the rule of thumb. A rod of no
    stated material is taken as `ROD_MATERIAL_ASSUMED` (the caller says so)."""
    material = rod_material or ROD_MATERIAL_ASSUMED
    modulus = YOUNGS_MODULUS_MPA[material]
    if (reciprocating_mass_g is not None and rod_section_area_mm2 is not None and stroke_mm is not None
            and rod_length_mm is not None and rod_length_mm > stroke_mm / 2.0):
        load = inertia_load_n(reciprocating_mass_g, stroke_mm, rod_length_mm, max_rpm)
        stretch = rod_stretch_mm(load, rod_length_mm, rod_section_area_mm2, modulus)
        return RunningAllowance(ROD_STRETCH, stretch + BEARING_CLEARANCE_MM, material, modulus, load, stretch,
                                BEARING_CLEARANCE_MM)
    figure, band_top = rule_of_thumb_mm(material, max_rpm)
    return RunningAllowance(RULE_OF_THUMB, figure, material, modulus, band_top_rpm=band_top)
