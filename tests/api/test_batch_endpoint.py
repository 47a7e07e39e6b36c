"""POST /v1/fit-checks/batch through the Flask client: JSON and CSV build lists, mixed
good and bad items, the item limit, references, and what the OpenAPI document says."""
from __future__ import annotations

import pytest
from sqlalchemy import event

from schemas.batch import BatchResponseSchema
from service.store import db
from service.web import create_app

URL = "/v1/fit-checks/batch"
# The contract's flush fit (fit-check-contract.md, "Geometry"): protrusion 19.0 − 1.5 −
# 17.5 = 0.0 mm, piston margin (17.5 + 8.0) − (17.5 + 4.0) = 4.0 mm.
FLUSH_PLUG = {"thread": "M14x1.25", "seat": "flat", "reach": 19.0, "gasket_thickness": 1.5, "firing_end": 4.0}
FLUSH_HEAD = {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5, "piston_clearance": 8.0}
CSV_HEADER = ("ref,plug_thread,plug_seat,plug_reach_in,plug_gasket_thickness_mm,plug_firing_end_mm,head_thread,"
              "head_seat,head_port_depth_mm,head_piston_clearance_mm\n")


def post_csv(client, text: str, query: str = ""):
    return client.post(URL + query, data=text.encode(), content_type="text/csv")


def test_a_json_list_answers_one_result_per_item_in_order_with_a_summary(client):
    items = [{"ref": "flush", "plug": FLUSH_PLUG, "head": FLUSH_HEAD},
             {"ref": "kilograms", "plug": dict(FLUSH_PLUG, reach="3 kg"), "head": FLUSH_HEAD},
             {"ref": "no-head", "plug": FLUSH_PLUG}]
    response = client.post(URL, json={"items": items})
    assert response.status_code == 200
    answer = response.get_json()
    assert BatchResponseSchema().validate(answer) == {}
    assert [r["ref"] for r in answer["results"]] == ["flush", "kilograms", "no-head"]
    assert [r["verdict"] for r in answer["results"]] == ["pass", "invalid", "invalid"]
    assert answer["results"][0]["geometry"]["piston_margin"]["nominal"] == pytest.approx(4.0)
    assert "reach" in answer["results"][1]["errors"]["plug"]
    assert answer["results"][2]["errors"] == {"head": ["Missing data for required field."]}
    assert answer["summary"] == {"total": 3, "pass": 1, "warn": 0, "fail": 0, "invalid": 2, "verdict": "fail"}


def test_a_csv_list_reports_lines_and_errors_by_column(client):
    # 0.75 in = 19.05 mm (NIST SP 811, 2008, B.8): protrusion 19.05 − 1.5 − 17.5 = 0.05 mm.
    text = CSV_HEADER + "a,M14,flat,0.75,1.5,4,M14,flat,17.5,8\n" + "b,M14,flat,three quarters,1.5,4,M14,flat,17.5,8\n"
    response = post_csv(client, text)
    assert response.status_code == 200
    first, second = response.get_json()["results"]
    assert (first["line"], first["verdict"]) == (2, "pass")
    assert first["geometry"]["protrusion_short_side"]["nominal"] == pytest.approx(0.05)
    assert second == {"ref": "b", "line": 3, "verdict": "invalid",
                      "errors": {"plug_reach_in": ["the column is in in (see its header): write a plain number"]}}


def test_references_that_exist_are_checked_and_those_that_do_not_are_invalid_naming_the_field(client, auth):
    assert client.post("/v1/plugs", json=dict(FLUSH_PLUG, sku="BATCH-PLUG"), headers=auth).status_code == 201
    assert client.post("/v1/heads", json=dict(FLUSH_HEAD, head_id="BATCH-HEAD"), headers=auth).status_code == 201
    items = [{"plug": {"sku": "BATCH-PLUG"}, "head": {"head_id": "BATCH-HEAD"}},
             {"plug": {"sku": "NO-SUCH-PLUG"}, "head": {"head_id": "BATCH-HEAD"}},
             {"plug": {"sku": "BATCH-PLUG"}, "head": {"head_id": "NO-SUCH-HEAD"}}]
    results = client.post(URL, json={"items": items}).get_json()["results"]
    assert results[0]["verdict"] == "pass"
    assert results[0]["geometry"]["piston_margin"]["nominal"] == pytest.approx(4.0)
    assert results[1]["errors"] == {"plug": {"sku": ["no plug with sku 'NO-SUCH-PLUG'"]}}
    assert results[2]["errors"] == {"head": {"head_id": ["no head with head_id 'NO-SUCH-HEAD'"]}}
    by_csv = post_csv(client, "sku,head_id\nNO-SUCH-PLUG,BATCH-HEAD\n").get_json()["results"][0]
    assert by_csv["errors"] == {"sku": ["no plug with sku 'NO-SUCH-PLUG'"]}


def test_a_list_of_many_references_is_resolved_in_one_query_per_table(app, client, auth):
    for index in range(5):
        client.post("/v1/plugs", json=dict(FLUSH_PLUG, sku=f"MANY-{index}"), headers=auth)
    client.post("/v1/heads", json=dict(FLUSH_HEAD, head_id="MANY-HEAD"), headers=auth)
    statements: list[str] = []
    engine = db.get_database(app).engine

    def record(conn, cursor, statement, parameters, context, executemany):
        statements.append(statement)

    event.listen(engine, "before_cursor_execute", record)
    try:
        items = [{"plug": {"sku": f"MANY-{i % 6}"}, "head": {"head_id": "MANY-HEAD"}} for i in range(300)]
        results = client.post(URL, json={"items": items}).get_json()["results"]
    finally:
        event.remove(engine, "before_cursor_execute", record)
    assert sum(r["verdict"] == "invalid" for r in results) == 50  # MANY-5 does not exist
    selects = [s for s in statements if s.lstrip().upper().startswith("SELECT")]
    assert len(selects) == 2, selects


@pytest.fixture
def small_app(database_url):
    application = create_app({"TESTING": True, "DATABASE_URL": database_url, "MAX_BATCH_ITEMS": 3})
    yield application
    db.get_database(application).engine.dispose()


def test_more_items_than_the_limit_is_a_413_problem_stating_the_limit(small_app):
    client = small_app.test_client()
    response = client.post(URL, json={"items": [{"plug": FLUSH_PLUG, "head": FLUSH_HEAD}] * 4})
    assert response.status_code == 413
    assert response.mimetype == "application/problem+json"
    assert "at most 3 items" in response.get_json()["detail"]
    assert "PLUGFIT_MAX_BATCH_ITEMS" in response.get_json()["detail"]
    csv_response = post_csv(client, "sku,head_id\n" + "A,B\n" * 4)
    assert csv_response.status_code == 413
    assert client.post(URL, json={"items": [{"plug": FLUSH_PLUG, "head": FLUSH_HEAD}] * 3}).status_code == 200


def test_a_csv_file_that_cannot_be_used_is_a_422_naming_line_and_column(client):
    response = post_csv(client, "ref,plug_thread,plug_seat,plug_rech_mm,head_thread,head_seat\n1,M14,flat,19,M14,flat\n")
    assert response.status_code == 422
    problem = response.get_json()
    assert response.mimetype == "application/problem+json"
    assert "line 1, column 'plug_rech_mm'" in problem["detail"]
    assert list(problem["errors"]["line 1"]) == ["plug_rech_mm"]
    ragged = post_csv(client, "plug_thread,plug_seat,head_thread,head_seat\nM14,flat,M14,flat\nM14,flat\n")
    assert ragged.status_code == 422 and "line 3" in ragged.get_json()["detail"]


@pytest.mark.parametrize("body, content_type, status", [
    (b'{"items": [', "application/json", 400),
    (b'{"items": []}', "application/json", 422),
    (b'{"lines": []}', "application/json", 422),
    (b"plug_thread\nM14\n", "text/plain", 415),
    (b"\xff\xfeplug", "text/csv", 422),
    (b"", "text/csv", 422),
    (b'{"items": [{"plug": ' + b'{"a":' * 100_000 + b"1" + b"}" * 100_000 + b"}]}", "application/json", 400),
])
def test_a_body_that_is_not_a_build_list_is_a_problem_not_a_500(client, body, content_type, status):
    response = client.post(URL, data=body, content_type=content_type)
    assert response.status_code == status
    assert response.mimetype == "application/problem+json"


def test_a_number_of_thousands_of_digits_makes_its_item_invalid_naming_the_field(client):
    """Issue 12: the decoder refuses integers over 4,300 digits, which used to refuse
    the whole list; now the item holding one is invalid and its field is named."""
    digits = b"9" * 5000
    body = (b'{"items": [{"ref": ' + digits + b', "plug": {}, "head": {}}, {"ref": "r2", "plug": '
            b'{"thread": "M14", "seat": "flat", "reach": ' + digits + b'}, "head": {"thread": "M14", "seat": "flat"}}]}')
    response = client.post(URL, data=body, content_type="application/json")
    assert response.status_code == 200
    first, second = response.get_json()["results"]
    assert first["verdict"] == second["verdict"] == "invalid"
    assert first["errors"]["ref"] == ["a ref is a string or a whole number"]
    assert second["errors"] == {"plug": {"reach": [
        "must be a finite number, not NaN, infinity or a number too large to hold (above 1e308)"]}}


def test_require_and_units_apply_to_every_item(client):
    items = [{"plug": FLUSH_PLUG, "head": FLUSH_HEAD}] * 2
    answer = client.post(URL + "?require=valve&units=imperial", json={"items": items}).get_json()
    assert answer["summary"]["fail"] == 2
    result = answer["results"][0]
    (valve,) = [f for f in result["findings"] if f["check"] == "valve"]
    assert valve["severity"] == "fail"
    # 4.0 mm = 0.15748 in (1 in = 25.4 mm, NIST SP 811, 2008, B.8).
    assert result["geometry"]["piston_margin"]["nominal"] == pytest.approx(0.15748)
    unknown = client.post(URL + "?require=sparkle", json={"items": items})
    assert unknown.status_code == 422 and "require" in unknown.get_json()["errors"]


def test_a_batch_is_a_read_open_without_a_key_unless_reads_need_one(client, database_url, api_key):
    assert client.post(URL, json={"items": [{"plug": FLUSH_PLUG, "head": FLUSH_HEAD}]}).status_code == 200
    closed = create_app({"TESTING": True, "DATABASE_URL": database_url, "REQUIRE_KEY_FOR_READS": True})
    try:
        closed_client = closed.test_client()
        body = {"items": [{"plug": FLUSH_PLUG, "head": FLUSH_HEAD}]}
        assert closed_client.post(URL, json=body).status_code == 401
        assert closed_client.post(URL, json=body, headers={"Authorization": f"Bearer {api_key}"}).status_code == 200
    finally:
        db.get_database(closed).engine.dispose()


def test_the_openapi_document_shows_the_json_and_csv_bodies_and_the_answer(client):
    spec = client.get("/v1/openapi.json").get_json()
    operation = spec["paths"]["/v1/fit-checks/batch"]["post"]
    content = operation["requestBody"]["content"]
    assert content["application/json"]["schema"] == {"$ref": "#/components/schemas/BatchRequest"}
    assert "text/csv" in content and content["text/csv"]["example"].startswith("ref,")
    assert operation["responses"]["200"]["content"]["application/json"]["schema"] == {
        "$ref": "#/components/schemas/BatchResponse"}
    assert "413" in operation["responses"]
    items = spec["components"]["schemas"]["BatchRequest"]["properties"]["items"]
    assert items["items"] == {"$ref": "#/components/schemas/BatchItem"}
    assert {"ref", "plug", "head", "options", "waive"} <= set(spec["components"]["schemas"]["BatchItem"]["properties"])
    example = operation["responses"]["200"]["content"]["application/json"]["example"]
    assert BatchResponseSchema().validate(example) == {}
