"""/v1/plugs through the Flask test client."""
from __future__ import annotations

import json

import pytest

from tests.api.problems import problem

PLUG = {
    "sku": "TEST-M14-FLAT",
    "description": "test line, M14 flat",
    "thread": "M14x1.25",
    "seat": "flat",
    "reach": {"value": 19.0, "unit": "mm", "plus": 0.1, "minus": 0.3},
    "gasket_thickness": 1.5,
    "firing_end": 4.0,
    "terminal_height": 60.0,
    "hex": 16.0,
    "resistor": True,
    "heat_range": {"scale": "shop", "value": 0.6},
    "gap": 0.8,
    "quantity_on_hand": 7,
    "location": "B3",
}


def create(client, auth, **changes):
    """POST the test plug with `changes`; a change to None leaves the member out."""
    document = {key: value for key, value in {**PLUG, **changes}.items() if value is not None}
    response = client.post("/v1/plugs", json=document, headers=auth)
    assert response.status_code == 201, response.get_json()
    return response


def test_creating_a_plug_answers_201_with_its_location_and_etag(client, auth):
    response = create(client, auth)
    assert response.headers["Location"] == "/v1/plugs/TEST-M14-FLAT"
    assert response.headers["ETag"]
    body = response.get_json()
    assert body["sku"] == "TEST-M14-FLAT"
    # Tolerances are kept as sent (plus 0.1, minus 0.3 mm), not rounded into a nominal.
    assert body["reach"] == {"value": 19.0, "unit": "mm", "plus": 0.1, "minus": 0.3}


def length(value, plus=0.0, minus=0.0):
    """A length as every answer writes it."""
    return {"value": value, "unit": "mm", "plus": plus, "minus": minus}


def test_a_created_plug_reads_back_as_sent_and_can_be_sent_back_unchanged(client, auth):
    create(client, auth)
    got = client.get("/v1/plugs/TEST-M14-FLAT")
    assert got.status_code == 200
    body = got.get_json()
    # One shape for every length, exact or not.
    assert body == {**PLUG, "nonstandard_thread": False, "heat_range": {"scale": "shop", "value": 0.6},
                    "reach": length(19.0, 0.1, 0.3), "gasket_thickness": length(1.5), "firing_end": length(4.0),
                    "terminal_height": length(60.0), "hex": length(16.0), "gap": length(0.8)}
    put = client.put("/v1/plugs/TEST-M14-FLAT", json=body, headers=auth)
    assert put.status_code == 200
    assert put.get_json() == body


def test_inputs_in_other_units_and_aliases_are_stored_canonically(client, auth):
    response = create(client, auth, thread="M14", seat="gasket", reach="0.75 in", hex="5/8 in")
    body = response.get_json()
    assert body["thread"] == "M14x1.25"  # contract: a bare M14 means M14x1.25
    assert body["seat"] == "flat"  # contract: gasket is an alias of flat
    # Written rounded to 0.001 mm, without the float noise of 0.75 * 25.4 (19.049999999999997).
    assert body["reach"] == length(19.05)  # 0.75 in x 25.4 mm/in (NIST SP 811, exact)
    assert body["hex"] == length(15.875)  # 5/8 in x 25.4 mm/in (NIST SP 811, exact)


def test_creating_a_sku_that_exists_is_a_409_problem(client, auth):
    create(client, auth)
    body = problem(client.post("/v1/plugs", json=PLUG, headers=auth), 409)
    assert body["errors"] == {"sku": ["'TEST-M14-FLAT' exists"]}


def test_skus_are_case_sensitive(client, auth):
    create(client, auth)
    create(client, auth, sku="t-14f-19")
    assert client.get("/v1/plugs?page_size=10").get_json()[0]["sku"] == "TEST-M14-FLAT"


@pytest.mark.parametrize("sku", ["", "-starts-with-dash", "has space", "slash/inside", "x" * 65, "ümlaut"])
def test_a_sku_outside_the_contract_rules_is_a_422_naming_sku(client, auth, sku):
    body = problem(client.post("/v1/plugs", json={**PLUG, "sku": sku}, headers=auth), 422)
    assert list(body["errors"]) == ["sku"]


@pytest.mark.parametrize("field, value", [
    ("reach", "3 kg"),          # wrong dimension
    ("reach", 400),             # longer than any standard reach by a wide margin
    ("reach", -2),              # negative length
    ("reach", "NaN mm"),        # not a number
    ("seat", "round"),          # unknown seat
    ("thread", "M15x1.25"),     # no standard spark-plug thread
    ("thread", "M15"),          # a bare size with no standard pitch
    ("hex", "16 kV"),           # wrong dimension
    ("quantity_on_hand", -1),
])
def test_a_plug_that_cannot_exist_is_a_422_naming_the_field(client, auth, field, value):
    body = problem(client.post("/v1/plugs", json={**PLUG, field: value}, headers=auth), 422)
    assert field in body["errors"], body


def test_a_conical_plug_with_a_gasket_is_a_422_naming_gasket_thickness(client, auth):
    body = problem(client.post("/v1/plugs", json={**PLUG, "seat": "conical"}, headers=auth), 422)
    assert body["errors"] == {"gasket_thickness": ["a conical-seat plug has no gasket"]}


def test_a_nonstandard_thread_is_accepted_when_the_client_says_so(client, auth):
    response = create(client, auth, thread="M15x1.25", nonstandard_thread=True)
    assert response.get_json()["thread"] == "M15x1.25"


def test_missing_thread_and_seat_and_unknown_members_are_named(client, auth):
    document = {key: value for key, value in PLUG.items() if key not in ("thread", "seat")}
    body = problem(client.post("/v1/plugs", json={**document, "colour": "red"}, headers=auth), 422)
    assert set(body["errors"]) == {"thread", "seat", "colour"}


def test_writes_without_a_valid_key_are_401_problems(client, auth):
    problem(client.post("/v1/plugs", json=PLUG), 401)
    problem(client.post("/v1/plugs", json=PLUG, headers={"Authorization": "Bearer pfk_wrong"}), 401)
    problem(client.post("/v1/plugs", json=PLUG, headers={"Authorization": "Basic dXNlcjpwYXNz"}), 401)
    create(client, auth)
    problem(client.put("/v1/plugs/TEST-M14-FLAT", json=PLUG), 401)
    problem(client.delete("/v1/plugs/TEST-M14-FLAT"), 401)
    assert client.get("/v1/plugs/TEST-M14-FLAT").status_code == 200


def test_getting_an_unknown_sku_is_a_404_problem_naming_it(client):
    body = problem(client.get("/v1/plugs/NOPE-1"), 404)
    assert body["detail"] == "No plug with sku 'NOPE-1'."


def test_replacing_clears_what_the_new_body_leaves_out(client, auth):
    create(client, auth)
    replacement = {"thread": "M14x1.25", "seat": "flat", "reach": 19.0}
    response = client.put("/v1/plugs/TEST-M14-FLAT", json=replacement, headers=auth)
    assert response.status_code == 200
    assert response.get_json() == {"sku": "TEST-M14-FLAT", "thread": "M14x1.25", "nonstandard_thread": False,
                                   "seat": "flat", "reach": length(19.0), "description": "", "quantity_on_hand": 0}


def test_replacing_an_unknown_sku_is_a_404_problem(client, auth):
    problem(client.put("/v1/plugs/NOPE-1", json=PLUG, headers=auth), 404)


def test_a_put_body_naming_another_sku_is_a_422_and_renames_nothing(client, auth):
    create(client, auth)
    body = problem(client.put("/v1/plugs/TEST-M14-FLAT", json={**PLUG, "sku": "OTHER"}, headers=auth), 422)
    assert list(body["errors"]) == ["sku"]
    assert client.get("/v1/plugs/OTHER").status_code == 404


def test_a_put_with_an_invalid_body_is_a_422_and_changes_nothing(client, auth):
    create(client, auth)
    problem(client.put("/v1/plugs/TEST-M14-FLAT", json={**PLUG, "reach": "3 kg"}, headers=auth), 422)
    assert client.get("/v1/plugs/TEST-M14-FLAT").get_json()["quantity_on_hand"] == 7


def test_the_etag_changes_with_each_write_and_guards_replacement(client, auth):
    first = create(client, auth).headers["ETag"]
    assert client.get("/v1/plugs/TEST-M14-FLAT").headers["ETag"] == first
    assert client.get("/v1/plugs/TEST-M14-FLAT", headers={"If-None-Match": first}).status_code == 304
    changed = client.put("/v1/plugs/TEST-M14-FLAT", json={**PLUG, "quantity_on_hand": 6},
                         headers={**auth, "If-Match": first})
    assert changed.status_code == 200
    second = changed.headers["ETag"]
    assert second != first
    # A client holding the old tag is refused, and nothing is overwritten.
    stale = client.put("/v1/plugs/TEST-M14-FLAT", json={**PLUG, "quantity_on_hand": 1}, headers={**auth, "If-Match": first})
    problem(stale, 412)
    problem(client.delete("/v1/plugs/TEST-M14-FLAT", headers={**auth, "If-Match": first}), 412)
    assert client.get("/v1/plugs/TEST-M14-FLAT").get_json()["quantity_on_hand"] == 6


def test_deleting_answers_204_then_the_plug_is_gone(client, auth):
    create(client, auth)
    response = client.delete("/v1/plugs/TEST-M14-FLAT", headers=auth)
    assert response.status_code == 204
    assert response.get_data() == b""
    problem(client.get("/v1/plugs/TEST-M14-FLAT"), 404)
    problem(client.delete("/v1/plugs/TEST-M14-FLAT", headers=auth), 404)


@pytest.fixture
def shelf(client, auth):
    """Five plugs that differ in one filtered property each."""
    create(client, auth, sku="TEST-1-M14-FLAT-19")
    create(client, auth, sku="TEST-2-M14-FLAT-12.7", reach=12.7)
    create(client, auth, sku="TEST-3-M14-FLAT-19-NO-RESISTOR", resistor=False)
    create(client, auth, sku="TEST-4-M14-FLAT-19-HEX-20.8", hex=20.8)
    create(client, auth, sku="TEST-5-M18-CONICAL-12", thread="M18x1.5", seat="conical", reach=11.2, gasket_thickness=None,
           hex=20.8)


def skus(response):
    assert response.status_code == 200, response.get_json()
    return [item["sku"] for item in response.get_json()]


def test_the_list_filters_by_thread_seat_reach_hex_and_resistor(client, shelf):
    assert skus(client.get("/v1/plugs")) == ["TEST-1-M14-FLAT-19", "TEST-2-M14-FLAT-12.7", "TEST-3-M14-FLAT-19-NO-RESISTOR", "TEST-4-M14-FLAT-19-HEX-20.8", "TEST-5-M18-CONICAL-12"]
    assert skus(client.get("/v1/plugs?thread=M18")) == ["TEST-5-M18-CONICAL-12"]
    assert skus(client.get("/v1/plugs?seat=taper")) == ["TEST-5-M18-CONICAL-12"]
    assert skus(client.get("/v1/plugs?reach=0.5%20in")) == ["TEST-2-M14-FLAT-12.7"]  # 12.7 mm = 1/2 in (NIST SP 811)
    assert skus(client.get("/v1/plugs?reach=19&resistor=false")) == ["TEST-3-M14-FLAT-19-NO-RESISTOR"]
    # 13/16 in = 20.6375 mm: the same hex family as 20.8 mm (contract, HEX_DIFFERS).
    assert skus(client.get("/v1/plugs?hex=13/16%20in")) == ["TEST-4-M14-FLAT-19-HEX-20.8", "TEST-5-M18-CONICAL-12"]
    assert skus(client.get("/v1/plugs?thread=M14&seat=flat&reach=19&hex=16&resistor=true")) == ["TEST-1-M14-FLAT-19"]


def test_a_bad_filter_is_a_422_naming_it(client):
    assert list(problem(client.get("/v1/plugs?reach=3%20kg"), 422)["errors"]) == ["reach"]
    assert list(problem(client.get("/v1/plugs?seat=round"), 422)["errors"]) == ["seat"]
    assert list(problem(client.get("/v1/plugs?resistor=maybe"), 422)["errors"]) == ["resistor"]


def test_the_list_pages_with_page_and_page_size(client, shelf):
    response = client.get("/v1/plugs?page=2&page_size=2")
    assert skus(response) == ["TEST-3-M14-FLAT-19-NO-RESISTOR", "TEST-4-M14-FLAT-19-HEX-20.8"]
    assert json.loads(response.headers["X-Pagination"]) == {
        "total": 5, "total_pages": 3, "first_page": 1, "last_page": 3, "page": 2,
        "previous_page": 1, "next_page": 3}
    # RFC 8288 links beside it, keeping the filters.
    links = response.headers["Link"]
    assert '<http://localhost/v1/plugs?page=3&page_size=2>; rel="next"' in links
    assert '<http://localhost/v1/plugs?page=1&page_size=2>; rel="prev"' in links
    assert '<http://localhost/v1/plugs?page=1&page_size=2>; rel="first"' in links
    assert '<http://localhost/v1/plugs?page=3&page_size=2>; rel="last"' in links
    filtered = client.get("/v1/plugs?thread=M14&page_size=2").headers["Link"]
    assert '<http://localhost/v1/plugs?thread=M14&page=2&page_size=2>; rel="next"' in filtered


def test_a_page_past_the_end_is_empty_and_still_says_which_page_it_is(client, shelf):
    response = client.get("/v1/plugs?page=999&page_size=2")
    assert skus(response) == []
    assert json.loads(response.headers["X-Pagination"]) == {
        "total": 5, "total_pages": 3, "first_page": 1, "last_page": 3, "page": 999, "previous_page": 3}
    assert 'rel="next"' not in response.headers["Link"]
    empty = client.get("/v1/plugs?thread=M10&page=2")
    assert skus(empty) == []
    assert json.loads(empty.headers["X-Pagination"]) == {"total": 0, "total_pages": 0, "page": 2}


def test_a_misspelt_query_parameter_is_a_422_naming_it(client, shelf):
    body = problem(client.get("/v1/plugs?thred=M14"), 422)
    assert body["errors"] == {"thred": ["unknown query parameter; did you mean thread?"]}
    assert "thread" in body["detail"]
    # Also where an operation takes no query parameters at all.
    assert list(problem(client.get("/v1/plugs/TEST-1-M14-FLAT-19?units=imperial"), 422)["errors"]) == ["units"]


def test_a_page_size_over_1000_is_a_422(client):
    body = problem(client.get("/v1/plugs?page_size=1001"), 422)
    assert list(body["errors"]) == ["page_size"]


def test_the_operator_may_lower_the_page_size_limit(database_url):
    from service.store import db
    from service.web import create_app

    app = create_app({"TESTING": True, "DATABASE_URL": database_url, "MAX_PAGE_SIZE": 20})
    try:
        client = app.test_client()
        assert client.get("/v1/plugs?page_size=20").status_code == 200
        body = problem(client.get("/v1/plugs?page_size=21"), 422)
        assert body["errors"] == {"page_size": ["Must be between 1 and 20."]}
    finally:
        db.get_database(app).engine.dispose()
