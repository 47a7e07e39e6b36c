"""Issue 18's fields through the stored records: a head with its seat machining and a
thread-repair insert, a plug with its seat diameters, in JSON, the CSV exchange and a
fit check by reference."""
from __future__ import annotations

from tests.api.problems import problem

HEAD = {
    "head_id": "T-REPAIRED-1",
    "description": "Test single, aluminium, port repaired with a coil insert",
    "thread": "M14x1.25",
    "seat": "flat",
    "port_depth": 9.5,
    "material": "aluminium",
    "spot_face_diameter": "0.75 in",
    "counterbore_diameter": 24.0,
    "insert": {"kind": "coil", "length": {"value": 12.0, "tol": 0.1}, "material": "stainless_steel"},
}
PLUG = {"sku": "T-P-1", "thread": "M14", "seat": "flat", "reach": 9.5, "hex": 20.8,
        "gasket_outside_diameter": 20.0}


def test_a_head_with_an_insert_keeps_it_and_can_be_sent_back_unchanged(client, auth):
    assert client.post("/v1/heads", json=HEAD, headers=auth).status_code == 201
    body = client.get("/v1/heads/T-REPAIRED-1").get_json()
    # 0.75 in = 19.05 mm exactly (NIST SP 811, 2008, appendix B)
    assert (body["spot_face_diameter"]["value"], body["spot_face_diameter"]["unit"]) == (19.05, "mm")
    assert body["insert"]["kind"] == "coil"
    assert body["insert"]["length"] == {"value": 12.0, "unit": "mm", "plus": 0.1, "minus": 0.1}
    assert client.put("/v1/heads/T-REPAIRED-1", json=body, headers=auth).get_json() == body


def test_a_coil_insert_with_an_outer_thread_is_a_422_naming_it(client, auth):
    document = {**HEAD, "insert": {"kind": "coil", "outer_thread": "M16x1.5"}}
    body = problem(client.post("/v1/heads", json=document, headers=auth), 422)
    assert "outer_thread" in body["errors"]["insert"]


def test_the_head_and_plug_exports_carry_the_new_columns_and_import_back(client, auth):
    client.post("/v1/heads", json=HEAD, headers=auth)
    client.post("/v1/plugs", json=PLUG, headers=auth)
    heads = client.get("/v1/exports/heads").get_data(as_text=True)
    plugs = client.get("/v1/exports/plugs").get_data(as_text=True)
    header = next(line for line in heads.splitlines() if line.startswith("head_id"))
    for column in ("spot_face_diameter_mm", "counterbore_diameter_mm", "seat_angle_deg", "insert_kind",
                   "insert_length_mm", "insert_length_plus_mm", "insert_outer_thread", "insert_material"):
        assert column in header.split(","), column
    assert "gasket_outside_diameter_mm" in next(line for line in plugs.splitlines() if line.startswith("sku"))
    for resource, text in (("heads", heads), ("plugs", plugs)):
        response = client.post(f"/v1/imports/{resource}", data=text, headers={**auth, "Content-Type": "text/csv"})
        assert response.get_json()["unchanged"] == 1, response.get_json()


def test_a_check_by_reference_reads_the_stored_insert_and_seat(client, auth):
    client.post("/v1/heads", json=HEAD, headers=auth)
    client.post("/v1/plugs", json=PLUG, headers=auth)
    result = client.post("/v1/fit-checks", json={"plug": {"sku": "T-P-1"}, "head": {"head_id": "T-REPAIRED-1"}})
    codes = {finding["code"] for finding in result.get_json()["findings"]}
    # a 20.8 mm six-point hex is 24.02 mm across its corners (exact geometry): trapped in 24 mm;
    # a 20 mm gasket on a 19.05 mm face overhangs; a 12 mm insert stands 2.5 mm proud of 9.5 mm
    assert {"HEX_TRAPPED", "GASKET_OVERHANG", "INSERT_FITTED", "INSERT_PROUD"} <= codes
    document = result.get_json()
    assert document["geometry"]["insert_protrusion_long_side"]["max"] == 2.6
    assert any("maker's instructions" in text for text in document["cautions"])
    assert any("only when the engine is cold" in text for text in document["cautions"])
