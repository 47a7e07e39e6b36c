"""POST /v1/fit-checks through the Flask test client."""
from __future__ import annotations

import pytest

from schemas.results import FitResultSchema
from tests.api.problems import problem

# The contract's flush fit: reach 19 on a 1.5 mm gasket in a 17.5 mm port puts the
# thread end at 17.5 mm, flush (protrusion 0); the tip at 17.5 + 4.0 = 21.5 mm; the
# piston 17.5 + 8.0 = 25.5 mm from the seat, so the piston margin is 4.0 mm
# (fit-check-contract.md, Geometry).
FLUSH_PLUG = {"thread": "M14x1.25", "seat": "flat", "reach": 19.0, "gasket_thickness": 1.5, "firing_end": 4.0}
FLUSH_HEAD = {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5, "piston_clearance": 8.0}


def check(client, body, query="", headers=None):
    return client.post("/v1/fit-checks" + query, json=body, headers=headers or {})


@pytest.fixture
def stored(client, auth):
    """The flush plug and head, stored as P-FLUSH and H-FLUSH."""
    assert client.post("/v1/plugs", json={**FLUSH_PLUG, "sku": "P-FLUSH"}, headers=auth).status_code == 201
    assert client.post("/v1/heads", json={**FLUSH_HEAD, "head_id": "H-FLUSH"}, headers=auth).status_code == 201


def test_an_inline_flush_fit_passes_with_the_contract_geometry(client):
    response = check(client, {"plug": FLUSH_PLUG, "head": FLUSH_HEAD})
    assert response.status_code == 200
    document = response.get_json()
    assert FitResultSchema().validate(document) == {}
    assert document["verdict"] == "pass"
    assert document["thread"] == "M14x1.25"
    assert document["geometry"]["protrusion_short_side"]["nominal"] == pytest.approx(0.0)
    assert document["geometry"]["protrusion_long_side"]["nominal"] == pytest.approx(0.0)
    assert document["geometry"]["tip_position"]["nominal"] == pytest.approx(21.5)
    assert document["geometry"]["piston_margin"]["nominal"] == pytest.approx(4.0)
    assert document["geometry"]["piston_margin"]["unit"] == "mm"


def test_imperial_units_answer_in_inches(client):
    document = check(client, {"plug": FLUSH_PLUG, "head": FLUSH_HEAD}, "?units=imperial").get_json()
    margin = document["geometry"]["piston_margin"]
    assert margin["unit"] == "in"
    assert margin["nominal"] == pytest.approx(4.0 / 25.4, abs=1e-5)  # 1 in = 25.4 mm exactly (NIST SP 811)


def test_an_unknown_unit_system_is_a_422_naming_units(client):
    body = problem(check(client, {"plug": FLUSH_PLUG, "head": FLUSH_HEAD}, "?units=furlongs"), 422)
    assert list(body["errors"]) == ["units"]


@pytest.mark.parametrize("plug, head", [
    ({"sku": "P-FLUSH"}, {"head_id": "H-FLUSH"}),
    ({"sku": "P-FLUSH"}, FLUSH_HEAD),
    (FLUSH_PLUG, {"head_id": "H-FLUSH"}),
])
def test_references_and_inline_dimensions_mix_freely_with_the_same_answer(client, stored, plug, head):
    document = check(client, {"plug": plug, "head": head}).get_json()
    assert document["verdict"] == "pass"
    assert document["geometry"]["piston_margin"]["nominal"] == pytest.approx(4.0)


def test_an_unknown_sku_is_a_404_problem_naming_plug_sku(client, stored):
    body = problem(check(client, {"plug": {"sku": "P-NONE"}, "head": {"head_id": "H-FLUSH"}}), 404)
    assert body["errors"] == {"plug": {"sku": ["no plug with sku 'P-NONE'"]}}
    assert "P-NONE" in body["detail"]


def test_an_unknown_head_id_is_a_404_problem_naming_head_head_id(client, stored):
    body = problem(check(client, {"plug": {"sku": "P-FLUSH"}, "head": {"head_id": "H-NONE"}}), 404)
    assert body["errors"] == {"head": {"head_id": ["no head with head_id 'H-NONE'"]}}


def test_a_reach_in_kilograms_is_a_422_naming_plug_reach(client):
    body = problem(check(client, {"plug": {**FLUSH_PLUG, "reach": "3 kg"}, "head": FLUSH_HEAD}), 422)
    assert list(body["errors"]) == ["plug"] and list(body["errors"]["plug"]) == ["reach"]


def test_a_reference_with_dimensions_beside_it_is_a_422(client):
    body = problem(check(client, {"plug": {"sku": "P-FLUSH", "reach": 19}, "head": FLUSH_HEAD}), 422)
    assert body["errors"] == {"plug": {"reach": ["give sku alone or the dimensions inline, not both"]}}


def test_a_missing_head_and_an_unknown_option_are_both_named(client):
    body = problem(check(client, {"plug": FLUSH_PLUG, "options": {"colour": "red"}}), 422)
    assert set(body["errors"]) == {"head", "options"}
    assert list(body["errors"]["options"]) == ["colour"]


def test_a_check_is_a_read_so_it_needs_no_key(client):
    assert check(client, {"plug": FLUSH_PLUG, "head": FLUSH_HEAD}).status_code == 200


def test_when_reads_need_a_key_a_check_without_one_is_a_401(database_url, api_key):
    from service.store import db
    from service.web import create_app

    app = create_app({"TESTING": True, "DATABASE_URL": database_url, "REQUIRE_KEY_FOR_READS": True})
    try:
        client = app.test_client()
        problem(check(client, {"plug": FLUSH_PLUG, "head": FLUSH_HEAD}), 401)
        allowed = check(client, {"plug": FLUSH_PLUG, "head": FLUSH_HEAD},
                        headers={"Authorization": f"Bearer {api_key}"})
        assert allowed.status_code == 200
    finally:
        db.get_database(app).engine.dispose()


# --- pressures: absolute or gauge, never both ---------------------------------------------------

BOOSTED_HEAD = {**FLUSH_HEAD, "compression_ratio": 9.5, "ignition_voltage": 45}
GAP_PLUG = {**FLUSH_PLUG, "gap": 1.0}


def test_giving_both_the_absolute_and_the_gauge_pressure_is_refused(client):
    head = {**BOOSTED_HEAD, "intake_pressure": "2.5 bar", "boost_pressure": "1.5 bar"}
    errors = problem(check(client, {"plug": GAP_PLUG, "head": head}), 422)["errors"]
    (message,) = errors["head"]["boost_pressure"]
    assert "intake_pressure (absolute)" in message and "boost_pressure (gauge)" in message


@pytest.mark.parametrize(("field", "value", "hint"), [
    ("intake_pressure", "15 psig", "boost_pressure"), ("intake_pressure", "1.5 bar gauge", "boost_pressure"),
    ("boost_pressure", "2.5 bara", "intake_pressure"), ("peak_pressure", "60 barg", "atmosphere")])
def test_a_pressure_marked_as_the_other_kind_is_refused_naming_the_field_to_use(client, field, value, hint):
    errors = problem(check(client, {"plug": GAP_PLUG, "head": {**BOOSTED_HEAD, field: value}}), 422)["errors"]
    (message,) = errors["head"][field]
    assert hint in message and ("absolute" in message or "gauge" in message)


def test_a_head_without_forced_induction_cannot_have_boost(client):
    head = {**BOOSTED_HEAD, "forced_induction": False, "boost_pressure": 0.5}
    assert "boost_pressure" in problem(check(client, {"plug": GAP_PLUG, "head": head}), 422)["errors"]["head"]


def test_a_stored_boosted_head_without_a_pressure_leaves_the_gap_not_checked(client, auth):
    head = {**BOOSTED_HEAD, "head_id": "H-BOOST", "forced_induction": True}
    assert client.post("/v1/heads", json=head, headers=auth).status_code == 201
    stored = client.get("/v1/heads/H-BOOST").get_json()
    assert stored["forced_induction"] is True and stored.get("boost_pressure") is None
    document = check(client, {"plug": GAP_PLUG, "head": {"head_id": "H-BOOST"}}).get_json()
    (skipped,) = [f for f in document["findings"] if f["code"] == "NOT_CHECKED" and f["check"] == "gap_voltage"]
    assert "forced_induction" in skipped["message"]
    boosted = client.put("/v1/heads/H-BOOST", json={**head, "boost_pressure": "15 psi"}, headers=auth)
    assert boosted.status_code == 200
    # 15 psi = 1.034214 bar (NIST SP 811), read as gauge and kept in bar (answered to 5 digits)
    assert boosted.get_json()["boost_pressure"] == {"value": pytest.approx(1.034214, abs=1e-5), "unit": "bar"}


def test_an_imperial_answer_says_its_intake_pressure_is_absolute(client):
    head = {**BOOSTED_HEAD, "boost_pressure": "15 psi", "ignition_voltage": 30}
    document = check(client, {"plug": GAP_PLUG, "head": head}, "?units=imperial").get_json()
    (margin,) = [f for f in document["findings"] if f["code"] == "GAP_VOLTAGE_MARGIN"]
    # 1.01325 bar + 15 psi = 29.696 psi absolute (NIST SP 811: 1 psi = 6.894 757 kPa)
    assert "29.7 psi absolute" in margin["message"]
    assert document["analysis"]["gap_voltage"]["intake_pressure"]["unit"] == "psi"
