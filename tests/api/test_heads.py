"""/v1/heads through the Flask test client."""
from __future__ import annotations

import pytest

from tests.api.problems import problem

HEAD = {
    "head_id": "T-TWIN-1",
    "description": "Test twin, aluminium, M14 flat port",
    "thread": "M14x1.25",
    "seat": "flat",
    "port_depth": {"value": 17.5, "tol": 0.1},
    "port_depth_long_side": 19.0,
    "piston_clearance": 8.0,
    "seat_to_valve": 27.5,
    "well_bore": 28.0,
    "hex": 16.0,
    "resistor_required": True,
    "material": "aluminium",
    "heat_range_band": {"scale": "shop", "min": 0.4, "max": 0.6},
    "boot_range": {"min": 55.0, "max": {"value": 70.0, "plus": 1.0, "minus": 2.0}},
    "compression_ratio": 10.5,
    "intake_pressure": 1.0,
    "intake_temperature": "320 K",
    "peak_pressure": "60 bar",
    "ignition_voltage": 30,
    "bore": 84.0,
    "stroke": 90.0,
    "rod_length": 150.0,
    "spark_advance": 30,
    "plug_inclination": "0.25 rad",
    "max_rpm": "7000 r/min",
    "rod_material": "steel",
    "reciprocating_mass": "0.6 kg",
    "rod_section_area": "1.5 cm**2",
}


def create(client, auth, **changes):
    document = {key: value for key, value in {**HEAD, **changes}.items() if value is not None}
    response = client.post("/v1/heads", json=document, headers=auth)
    assert response.status_code == 201, response.get_json()
    return response


def test_a_created_head_keeps_every_value_and_tolerance(client, auth):
    response = create(client, auth)
    assert response.headers["Location"] == "/v1/heads/T-TWIN-1"
    body = client.get("/v1/heads/T-TWIN-1").get_json()
    assert body["port_depth"] == {"value": 17.5, "unit": "mm", "plus": 0.1, "minus": 0.1}
    assert body["boot_range"] == {"min": {"value": 55.0, "unit": "mm", "plus": 0.0, "minus": 0.0},
                                  "max": {"value": 70.0, "unit": "mm", "plus": 1.0, "minus": 2.0}}
    assert body["heat_range_band"] == {"scale": "shop", "min": 0.4, "max": 0.6}
    assert body["intake_temperature"] == {"value": 320.0, "unit": "K"}  # with its unit: a bare number means degC
    assert body["peak_pressure"] == {"value": 60.0, "unit": "bar"}
    assert body["material"] == "aluminium"
    # 0.25 rad = 14.324 deg (1 rad = 180/pi deg, SI Brochure 9th ed., table 4), to 0.001 deg
    assert body["plug_inclination"] == {"value": 14.324, "unit": "deg"}
    # the running clearance's inputs in their canonical units (1 kg = 1000 g, 1 cm² = 100 mm², exact)
    assert body["max_rpm"] == {"value": 7000.0, "unit": "rpm"}
    assert body["rod_material"] == "steel"
    assert body["reciprocating_mass"] == {"value": 600.0, "unit": "g"}
    assert body["rod_section_area"] == {"value": 150.0, "unit": "mm**2"}


@pytest.mark.parametrize(("field", "value", "says"), [
    ("max_rpm", "150 Hz", "revolutions per minute"),  # pint would read 150 Hz as 1,432 rpm
    ("max_rpm", 100_000, "at most 25000 rpm"),
    ("rod_material", "wood", "must be one of: steel, aluminium, titanium"),
    ("reciprocating_mass", "600 mm", "is not a mass"),
    ("rod_section_area", "150 mm", "is not an area"),
])
def test_running_inputs_that_cannot_be_read_are_422_problems_naming_the_field(client, auth, field, value, says):
    body = problem(client.post("/v1/heads", json={**HEAD, field: value}, headers=auth), 422)
    assert says in " ".join(body["errors"][field])


def test_a_head_read_back_can_be_sent_back_unchanged(client, auth):
    create(client, auth)
    body = client.get("/v1/heads/T-TWIN-1").get_json()
    response = client.put("/v1/heads/T-TWIN-1", json=body, headers=auth)
    assert response.status_code == 200
    assert response.get_json() == body


def test_a_bare_intake_temperature_is_read_as_degrees_celsius(client, auth):
    create(client, auth, intake_temperature=45)
    # 45 degC = 318.15 K (the kelvin is defined with 0 degC = 273.15 K, SI Brochure 9th ed., 2.3.1)
    assert client.get("/v1/heads/T-TWIN-1").get_json()["intake_temperature"] == {"value": 318.15, "unit": "K"}


def test_creating_a_head_id_that_exists_is_a_409_problem(client, auth):
    create(client, auth)
    body = problem(client.post("/v1/heads", json=HEAD, headers=auth), 409)
    assert body["errors"] == {"head_id": ["'T-TWIN-1' exists"]}


@pytest.mark.parametrize("field, value", [
    ("head_id", "bad id"),
    ("port_depth", "3 kg"),
    ("port_depth", 500),
    ("seat", "round"),
    ("thread", "M9"),
    ("material", "wood"),
    ("intake_pressure", "-1 bar"),
    ("ignition_voltage", "30 mm"),
    ("compression_ratio", "abc"),
    ("plug_inclination", 80),  # past 75 deg a plug is a side plug: another clearance model
    ("plug_inclination", "-5 deg"),
    ("plug_inclination", "5 mm"),
])
def test_a_head_that_cannot_exist_is_a_422_naming_the_field(client, auth, field, value):
    body = problem(client.post("/v1/heads", json={**HEAD, field: value}, headers=auth), 422)
    assert field in body["errors"], body


def test_port_depth_and_design_reach_together_are_a_422(client, auth):
    body = problem(client.post("/v1/heads", json={**HEAD, "design_reach": 19.0}, headers=auth), 422)
    assert body["errors"] == {"design_reach": ["give port_depth or design_reach, not both"]}


def test_head_writes_without_a_key_are_401_problems(client, auth):
    problem(client.post("/v1/heads", json=HEAD), 401)
    create(client, auth)
    problem(client.put("/v1/heads/T-TWIN-1", json=HEAD), 401)
    problem(client.delete("/v1/heads/T-TWIN-1", headers={"Authorization": "Bearer nope"}), 401)


def test_an_unknown_head_id_is_a_404_problem(client, auth):
    assert problem(client.get("/v1/heads/NOPE"), 404)["detail"] == "No head with head_id 'NOPE'."
    problem(client.put("/v1/heads/NOPE", json=HEAD, headers=auth), 404)
    problem(client.delete("/v1/heads/NOPE", headers=auth), 404)


def test_a_put_naming_another_head_id_is_a_422(client, auth):
    create(client, auth)
    body = problem(client.put("/v1/heads/T-TWIN-1", json={**HEAD, "head_id": "T-TWIN-2"}, headers=auth), 422)
    assert list(body["errors"]) == ["head_id"]


def test_deleting_a_head_answers_204(client, auth):
    create(client, auth)
    assert client.delete("/v1/heads/T-TWIN-1", headers=auth).status_code == 204
    problem(client.get("/v1/heads/T-TWIN-1"), 404)


def test_the_head_list_finds_text_in_the_description_in_any_case(client, auth):
    create(client, auth)
    create(client, auth, head_id="T-SINGLE-1", description="Test single, cast iron 18 mm taper port",
           thread="M18x1.5", seat="conical", material="cast_iron", port_depth=11.2, port_depth_long_side=None)
    create(client, auth, head_id="T-PCT", description="Test twin at 100%_load, wildcards in the text")

    def ids(query):
        response = client.get("/v1/heads" + query)
        assert response.status_code == 200, response.get_json()
        return [item["head_id"] for item in response.get_json()]

    assert ids("") == ["T-PCT", "T-SINGLE-1", "T-TWIN-1"]
    assert ids("?q=twin") == ["T-PCT", "T-TWIN-1"]
    assert ids("?q=cast%20iron") == ["T-SINGLE-1"]
    # % and _ are matched literally, not as SQL wildcards.
    assert ids("?q=100%25_") == ["T-PCT"]
    assert ids("?q=%25") == ["T-PCT"]
    assert ids("?q=_l") == ["T-PCT"]
    assert ids("?seat=taper&thread=M18") == ["T-SINGLE-1"]
    assert ids("?q=nothing-like-this") == []
