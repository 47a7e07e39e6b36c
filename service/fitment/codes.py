"""The finding codes clients switch on: stable names, each with the check that raises it
and its severity. The OpenAPI document's enum and docs/engineering.md's table are tested against
this list, so a new check cannot ship an undocumented code. A code that can be raised at
more than one severity lists them, lowest first ("warn, fail")."""
from __future__ import annotations

FINDING_CODES: dict[str, tuple[str, str]] = {
    "THREAD_MISMATCH": ("thread", "fail"),
    "SEAT_MISMATCH": ("seat", "fail"),
    "GASKET_MISSING": ("gasket", "warn"),
    "INDEXING_WASHER": ("gasket", "info"),
    "REACH_LONG": ("reach", "warn, fail"),
    "REACH_SHORT": ("reach", "warn, fail"),
    "REACH_INCLINED_ROOF": ("reach", "info"),
    "PISTON_CONTACT": ("piston", "fail"),
    "VALVE_CONTACT": ("valve", "fail"),
    "TOOL_CLEARANCE": ("tool_clearance", "fail"),
    "HEX_DIFFERS": ("hex", "info"),
    "RESISTOR_REQUIRED": ("resistor", "warn"),
    "TORQUE_OUT_OF_RANGE": ("torque", "warn, fail"),
    "THREAD_STRIP_RISK": ("thread_strength", "warn"),
    "GAP_VOLTAGE_MARGIN": ("gap_voltage", "warn"),
    "HEAT_RANGE_OUT_OF_BAND": ("heat_range", "warn"),
    "BOOT_ENGAGEMENT": ("boot", "warn"),
    "GASKET_OVERHANG": ("seat_diameter", "warn"),
    "HEX_TRAPPED": ("seat_diameter", "fail"),
    "SEAT_ANGLE_MISMATCH": ("seat_diameter", "warn, fail"),
    "TAPER_DIAMETER": ("seat_diameter", "warn"),
    "INSERT_FITTED": ("insert", "info"),
    "INSERT_PROUD": ("insert", "warn, fail"),
    "INSERT_SHORT": ("insert", "warn"),
    "NOT_CHECKED": ("any", "info"),
}
