"""Example documents for the OpenAPI file and the documentation.

Invented example records (EXAMPLE-* identifiers), not catalogue data: the sizes are the
standard M14x1.25 flat-seat family (see seed_catalog/), the rest is made up to show the
shape of a request.
"""
from __future__ import annotations

PLUG = {
    "sku": "EXAMPLE-P-0001",
    "description": "Example line: M14 flat seat, 19 mm reach, resistor",
    "thread": "M14x1.25",
    "seat": "flat",
    "reach": {"value": 19.0, "unit": "mm", "tol": 0.2},
    "gasket_thickness": 1.5,
    "firing_end": 4.0,
    "hex": 16.0,
    "resistor": True,
    "gap": 0.8,
    "quantity_on_hand": 12,
    "location": "shelf B3",
}

HEAD = {
    "head_id": "EXAMPLE-HEAD-1",
    "description": "Example aluminium head, flat-seat M14 port",
    "thread": "M14x1.25",
    "seat": "flat",
    "port_depth": 17.5,
    "piston_clearance": 8.0,
    "well_bore": 28.0,
    "hex": 16.0,
    "resistor_required": True,
    "material": "aluminium",
}

FIT_CHECK_INLINE = {
    "plug": {"thread": "M14x1.25", "seat": "flat", "reach": 19.0, "gasket_thickness": 1.5, "firing_end": 4.0},
    "head": {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5, "piston_clearance": 8.0},
    "options": {"stack": "worst_case"},
}

FIT_CHECK_BY_REFERENCE = {
    "plug": {"sku": "EXAMPLE-P-0001"},
    "head": {"head_id": "EXAMPLE-HEAD-1"},
}

FIT_RESULT = {
    "verdict": "pass",
    "thread": "M14x1.25",
    "findings": [
        {"code": "NOT_CHECKED", "check": "valve", "severity": "info",
         "message": "The valve check was not made: the head gives neither valve_clearance nor seat_to_valve.",
         "values": {}},
    ],
    "geometry": {
        "protrusion_short_side": {"nominal": 0.0, "min": 0.0, "max": 0.0, "rss_min": 0.0, "rss_max": 0.0,
                                  "unit": "mm"},
        "protrusion_long_side": {"nominal": 0.0, "min": 0.0, "max": 0.0, "rss_min": 0.0, "rss_max": 0.0,
                                 "unit": "mm"},
        "tip_position": {"nominal": 21.5, "min": 21.5, "max": 21.5, "rss_min": 21.5, "rss_max": 21.5, "unit": "mm"},
        "piston_margin": {"nominal": 4.0, "min": 4.0, "max": 4.0, "rss_min": 4.0, "rss_max": 4.0, "unit": "mm"},
    },
    "analysis": {"piston": {"governing_feature": "tip", "tip_margin": {"value": 4.0, "unit": "mm"},
                            "shell_edge_margin": {"value": 8.0, "unit": "mm"},
                            "shell_edge_offset": {"value": 0.0, "unit": "mm"},
                            "plug_inclination": {"value": 0.0, "unit": "deg"},
                            "dynamic_allowance": {"value": 0.0, "unit": "mm"},
                            "dynamic_allowance_method": "default"},
                 "thread_strength": {"safety_factor": {"value": 7.3774, "unit": ""}}},
    "torque": {"min": 25.0, "max": 30.0, "unit": "N*m", "lubrication": "dry", "turn_angle_deg": 180.0,
               "turn_angle_note": "after finger-tight, with a new gasket", "reused_gasket_turn_angle_deg": 30.0,
               "source": "torque: common torque guidance (common practice)"},
    "assumptions": [("dynamic_allowance not given: 0 mm used (none unless given or, for the piston, estimated from the "
                     "head's max_rpm; it is engine-specific)"),
                    "min_clearance not given: 1.5 mm used (common practice (about 0.060 in), from memory)",
                    ("piston: plug_inclination not given: 0 deg assumed (plug axis parallel to the cylinder axis), "
                     "so the shell's edge is no nearer the crown than its axis")],
    "cautions": [("Torque, clearance and gap values are guidance: the engine maker's service data, "
                 "local regulations and licensed practice come first.")],
    "engine_version": "2.2.0",
    "catalog_version": "fbcb0fa264fd",
}



def _length(value: float, tolerance: float = 0.0) -> dict:
    return {"value": value, "unit": "mm", "plus": tolerance, "minus": tolerance}


# What the API answers for the example records (every length a Length object). Written out
# rather than computed at import, which would start the unit registry in every process;
# tests/api/test_openapi.py checks that they are what the answer schemas write.
PLUG_ANSWER = {**PLUG, "nonstandard_thread": False, "reach": _length(19.0, 0.2), "gasket_thickness": _length(1.5),
               "firing_end": _length(4.0), "hex": _length(16.0), "gap": _length(0.8)}
HEAD_ANSWER = {**HEAD, "nonstandard_thread": False, "port_depth": _length(17.5), "piston_clearance": _length(8.0),
               "well_bore": _length(28.0), "hex": _length(16.0)}
