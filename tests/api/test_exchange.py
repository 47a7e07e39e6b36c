"""POST /v1/imports/{plugs,heads} and GET /v1/exports/{plugs,heads} through the Flask client."""
from __future__ import annotations

import json

from schemas.problem import PROBLEM_MEDIA_TYPE
from service.usecases import seeding

CSV = {"Content-Type": "text/csv"}
FILE = ("sku,thread,seat,reach_mm,reach_plus_mm,reach_minus_mm,firing_end_mm,hex_mm,resistor,quantity_on_hand,location\n"
        "A-1,M14x1.25,flat,19,0.1,0.1,3,16,true,4,A-01\n"
        "A-2,M14x1.25,flat,12.7,,,3,20.8,false,0,\n")


def post(client, auth, resource, body, query="", content_type="text/csv"):
    return client.post(f"/v1/imports/{resource}{query}", data=body,
                       headers={**auth, "Content-Type": content_type})


def test_an_import_answers_with_what_it_did(client, auth):
    response = post(client, auth, "plugs", FILE)
    assert response.status_code == 200, response.get_json()
    assert response.get_json() == {"resource": "plugs", "mode": "upsert", "rows": 2, "added": 2, "changed": 0,
                                   "unchanged": 0, "deleted": 0, "dry_run": False}
    body = client.get("/v1/plugs/A-1").get_json()
    assert body["reach"] == {"value": 19.0, "unit": "mm", "plus": 0.1, "minus": 0.1}
    assert (body["quantity_on_hand"], body["location"]) == (4, "A-01")


def test_an_import_needs_an_api_key(client):
    response = client.post("/v1/imports/plugs", data=FILE, headers=CSV)
    assert response.status_code == 401
    assert client.get("/v1/plugs").get_json() == []


def test_a_bad_row_in_the_middle_is_a_422_listing_every_bad_row_and_nothing_is_written(client, auth):
    post(client, auth, "plugs", FILE)
    before = client.get("/v1/exports/plugs").data
    lines = FILE.splitlines()
    bad = "\n".join([lines[0], lines[1].replace(",4,A-01", ",40,A-02"),
                     "B-1,M14x1.25,flat,19,,,3,16,maybe,1,",      # line 3: not a boolean
                     "B-2,M14x1.25,flat,19,,,3,16,true,-5,",      # line 4: negative stock
                     lines[2]]) + "\n"
    for mode in ("upsert", "replace"):
        response = post(client, auth, "plugs", bad, f"?mode={mode}")
        assert response.status_code == 422
        assert response.mimetype == PROBLEM_MEDIA_TYPE
        problem = response.get_json()
        assert set(problem["errors"]) == {"3", "4"}
        assert list(problem["errors"]["3"]) == ["resistor"]
        assert list(problem["errors"]["4"]) == ["quantity_on_hand"]
        assert "nothing was written" in problem["detail"]
        assert client.get("/v1/exports/plugs").data == before


def test_the_export_imports_back_unchanged(client, auth):
    post(client, auth, "plugs", FILE)
    exported = client.get("/v1/exports/plugs")
    assert exported.status_code == 200
    assert exported.mimetype == "text/csv"
    assert exported.headers["Content-Disposition"] == 'attachment; filename="plugs.csv"'
    again = post(client, auth, "plugs", exported.data, "?mode=replace").get_json()
    assert (again["unchanged"], again["changed"], again["added"], again["deleted"]) == (2, 0, 0, 0)
    assert client.get("/v1/exports/plugs").data == exported.data


def test_replace_makes_the_file_the_whole_table(client, auth):
    post(client, auth, "plugs", FILE)
    only = "\n".join(FILE.splitlines()[:2]) + "\n"
    report = post(client, auth, "plugs", only, "?mode=replace").get_json()
    assert report["deleted"] == 1
    assert [plug["sku"] for plug in client.get("/v1/plugs").get_json()] == ["A-1"]


def test_a_dry_run_reports_but_writes_nothing(client, auth):
    report = post(client, auth, "plugs", FILE, "?dry_run=true").get_json()
    assert (report["added"], report["dry_run"]) == (2, True)
    assert client.get("/v1/plugs").get_json() == []


def test_json_lines_import_with_errors_by_field(client, auth):
    good = {"sku": "J-1", "thread": "M14", "seat": "taper", "reach": 11.7, "quantity_on_hand": 3}
    body = json.dumps(good) + "\n" + json.dumps({**good, "sku": "J-2", "reach": "3 kg"}) + "\n"
    response = post(client, auth, "plugs", body, content_type="application/x-ndjson")
    assert response.status_code == 422
    assert list(response.get_json()["errors"]) == ["2"]
    assert list(response.get_json()["errors"]["2"]) == ["reach"]
    ok = post(client, auth, "plugs", json.dumps(good) + "\n", content_type="application/jsonl")
    assert ok.get_json()["added"] == 1


def test_heads_import_and_export_with_engine_conditions(client, auth):
    text = ("head_id,thread,seat,design_reach_mm,design_reach_plus_mm,design_reach_minus_mm,intake_pressure_bar,"
            "intake_temperature_k,heat_range_band_scale,heat_range_band_min,heat_range_band_max,"
            "boot_range_min_mm,boot_range_max_mm\n"
            "H-1,M14x1.25,flat,19,0.15,0.15,2.2,318.15,shop,0.4,0.6,52,58\n")
    assert post(client, auth, "heads", text).status_code == 200
    head = client.get("/v1/heads/H-1").get_json()
    assert head["heat_range_band"] == {"scale": "shop", "min": 0.4, "max": 0.6}
    exported = client.get("/v1/exports/heads").data.decode()
    assert exported.splitlines()[1].split(",")[exported.splitlines()[0].split(",").index("intake_temperature_k")] \
        == "318.15"
    assert post(client, auth, "heads", exported, "?mode=replace").get_json()["unchanged"] == 1


def test_another_content_type_is_a_415_and_a_bad_header_a_422(client, auth):
    assert post(client, auth, "plugs", FILE, content_type="application/json").status_code == 415
    response = post(client, auth, "plugs", "sku,reach\nA,19\n")
    assert response.status_code == 422
    assert response.get_json()["errors"] == {"header": ["unknown column 'reach'"]}


def test_the_demo_files_import_through_the_api(client, auth):
    for resource in ("plugs", "heads"):
        body = (seeding.DEMO_DIRECTORY / f"{resource}.csv").read_bytes()
        report = post(client, auth, resource, body).get_json()
        assert report["added"] == report["rows"] > 0
