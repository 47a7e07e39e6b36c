"""POST /v1/fit-checks/diagram through the Flask test client: an SVG drawing of the check."""
from __future__ import annotations

import xml.etree.ElementTree as ET

import cairosvg
import pytest

from schemas.problem import PROBLEM_MEDIA_TYPE

# The contract's flush fit (fit-check-contract.md, Geometry): thread end at 19.0 − 1.5 =
# 17.5 mm, tip at 17.5 + 4.0 = 21.5 mm, piston crown at 17.5 + 8.0 = 25.5 mm.
FLUSH_PLUG = {"thread": "M14x1.25", "seat": "flat", "reach": 19.0, "gasket_thickness": 1.5, "firing_end": 4.0}
FLUSH_HEAD = {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5, "piston_clearance": 8.0}


def draw(client, body, query=""):
    return client.post("/v1/fit-checks/diagram" + query, json=body)


def test_the_diagram_answers_an_svg_with_the_features_at_their_contract_positions(client):
    response = draw(client, {"plug": FLUSH_PLUG, "head": FLUSH_HEAD})
    assert response.status_code == 200
    assert response.mimetype == "image/svg+xml"
    root = ET.fromstring(response.data)
    scale, origin = float(root.get("data-px-per-mm")), float(root.get("data-origin-y"))
    features = {e.get("data-feature"): e for e in root.iter() if e.get("data-feature")}
    for name, axial_mm in {"thread_end": 17.5, "tip": 21.5, "piston_crown": 25.5, "port_depth": 17.5}.items():
        assert float(features[name].get("y1")) == pytest.approx(origin + axial_mm * scale, abs=0.01), name
    assert cairosvg.svg2png(bytestring=response.data)[:4] == b"\x89PNG"


def test_imperial_units_label_the_margins_in_inches(client):
    response = draw(client, {"plug": FLUSH_PLUG, "head": FLUSH_HEAD}, "?units=imperial")
    # hand-worked: piston margin 25.5 − 21.5 = 4.0 mm = 0.157 in (1 in = 25.4 mm, NIST SP 811)
    assert "piston margin 0.157 in" in response.get_data(as_text=True)


def test_a_bad_body_is_a_problem_naming_the_field_as_for_the_check(client):
    response = draw(client, {"plug": dict(FLUSH_PLUG, reach="nineteen"), "head": FLUSH_HEAD})
    assert response.status_code == 422
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    assert list(response.get_json(force=True)["errors"]["plug"]) == ["reach"]


def test_an_unknown_sku_is_a_404(client):
    response = draw(client, {"plug": {"sku": "NOPE"}, "head": FLUSH_HEAD})
    assert response.status_code == 404
    assert response.mimetype == PROBLEM_MEDIA_TYPE


def test_the_diagram_is_documented_as_svg_in_the_openapi_document(client):
    spec = client.get("/v1/openapi.json").get_json()
    operation = spec["paths"]["/v1/fit-checks/diagram"]["post"]
    assert "image/svg+xml" in operation["responses"]["200"]["content"]
    body_schema = operation["requestBody"]["content"]["application/json"]["schema"]
    check_schema = spec["paths"]["/v1/fit-checks"]["post"]["requestBody"]["content"]["application/json"]["schema"]
    assert body_schema == check_schema  # the same schema, not a copy
