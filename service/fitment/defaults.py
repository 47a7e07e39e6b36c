"""Defaults the engine applies when a request leaves an option out, with where each
comes from. Every default that is applied is named in the result's `assumptions`, so a
client can always see which numbers were its own and which were ours."""
from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True, slots=True)
class Default:
    value: float
    source: str


# Smallest acceptable electrode-to-piston (or valve) clearance at top dead centre.
# About 0.060 in is the figure engine builders quote for plug-to-piston clearance
# (common practice, from memory); we round to 1.5 mm.
MIN_CLEARANCE_MM = Default(1.5, "common practice (about 0.060 in), from memory")

# How far the plug's thread end may sit proud of or short of the chamber surface and
# still count as flush. Half a millimetre is below one M14 pitch (1.25 mm), so no full
# thread crest stands in the chamber or lies exposed (common practice).
FLUSH_TOLERANCE_MM = Default(0.5, "common practice (less than one thread pitch)")

# Extra closing of the piston (and valves) towards the plug at speed (rod stretch, bearing
# clearance, valve float). Zero unless the builder gives one or, for the piston, the head
# gives its max_rpm, when running.py estimates it: it depends on the engine.
DYNAMIC_ALLOWANCE_MM = Default(0.0, "none unless given or, for the piston, estimated from the head's max_rpm; "
                                    "it is engine-specific")

# How far the thread end may stand into the chamber (long side) before REACH_LONG fails,
# and stop short of it (short side) before REACH_SHORT fails, in pitches of the port's
# thread (ISO 68-1 pitch, read from its designation). More than about one thread
# standing in the chamber, or a plug a whole reach step short, is the wrong plug for the
# port (common practice, from memory); the shortest step between the trade's reaches is
# 9.5 -> 12.7 mm, more than two M14 pitches (reference-values.md, common practice).
MAX_PROTRUSION_PITCHES = Default(1.0, "one pitch of the port's thread (ISO 68-1); more than about one thread "
                                      "in the chamber is the wrong plug (common practice, from memory)")
MAX_RECESS_PITCHES = Default(2.0, "two pitches of the port's thread (ISO 68-1); a plug a whole reach step "
                                  "short is the wrong plug (common practice, from memory)")

# A re-used flat gasket is already crushed: it is tightened only about 1/12 turn past
# finger-tight instead of 1/2 turn (reference-values.md, common practice), and that turn
# is all the further crush it gets. So its installed thickness is taken as the new
# gasket's installed thickness less the plug's axial travel in that turn:
# pitch x 30/360 (0.104 mm on M14x1.25). Derived from a common-practice figure.
REUSED_GASKET_TURN_DEG = Default(30.0, "a re-used gasket is tightened about 1/12 turn past finger-tight "
                                       "(common practice)")

# The included angle of a conical plug seat when the plug gives none: 63 deg is the angle
# usually quoted for plug tapers (common practice; reference-values.md). Applied only to
# compare with a head that gives its own taper angle.
CONICAL_SEAT_ANGLE_DEG = Default(63.0, "the angle usually quoted for conical plug seats, common practice")

STACKS = ("worst_case", "rss")
GASKET_CONDITIONS = ("new", "reused")
LUBRICATIONS = ("dry", "oiled", "anti_seize")

CAUTIONS = (
    ("Torque, clearance and gap values are guidance: the engine maker's service data, "
    "local regulations and licensed practice come first."),
    ("Clearances are computed from the dimensions given; measure the head and piston "
    "of the actual engine before fitting a plug of a different reach."),
)
# Added when the request states anti-seize (common practice, from memory).
ANTI_SEIZE_CAUTION = (
    "Many plug makers advise no anti-seize on plated shells: the plating already keeps the "
    "thread from seizing, and anti-seize raises the preload reached at a given torque. If it "
    "is used, tighten to the lowered range given here, never to the dry figure.")
# Added whenever a running allowance is estimated from the head's max_rpm (running.py).
RUNNING_CAUTION = (
    "The running allowance (the piston's extra travel towards the head at speed) is an estimate from a simple "
    "model: rod stretch under the inertia load plus bearing clearances, or a rule of thumb. It leaves out the "
    "rod's thermal growth, the crank's bending and the piston's rocking. The engine and rod makers' clearance "
    "figures come first; measure the engine before running a clearance this close.")
