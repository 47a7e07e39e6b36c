"""The OpenAPI document: where it is served, and that every operation is described."""
from __future__ import annotations

import re

import pytest

OPERATIONS = ("get", "post", "put", "delete", "patch")


@pytest.fixture
def spec(client):
    response = client.get("/v1/openapi.json")
    assert response.status_code == 200
    return response.get_json()


def operations(spec):
    for path, item in spec["paths"].items():
        for method, operation in item.items():
            if method in OPERATIONS:
                yield path, method, operation


def test_the_document_is_openapi_3_at_v1_openapi_json(spec):
    assert spec["openapi"].startswith("3.")
    assert spec["info"]["title"] == "plugfit"
    # Guidance caution required wherever torque/clearance guidance is given.
    assert "guidance" in spec["info"]["description"]


def test_the_paths_of_this_service_are_documented(spec):
    assert {"/v1/health", "/v1/standard-sizes", "/v1/plugs", "/v1/plugs/{sku}", "/v1/heads",
            "/v1/heads/{head_id}", "/v1/fit-checks"} <= set(spec["paths"])


def test_every_operation_has_a_summary(spec):
    missing = [(path, method) for path, method, operation in operations(spec) if not operation.get("summary")]
    assert missing == []


def test_every_request_body_has_a_schema_and_an_example(spec):
    for path, method, operation in operations(spec):
        if "requestBody" not in operation:
            continue
        for media_type, content in operation["requestBody"]["content"].items():
            assert "schema" in content, (path, method, media_type)
            assert "example" in content or "examples" in content, (path, method, media_type)


def test_every_success_answer_with_a_body_has_a_schema_and_an_example(spec):
    for path, method, operation in operations(spec):
        successes = {status: response for status, response in operation["responses"].items()
                     if status.startswith("2")}
        assert successes, (path, method)
        for status, response in successes.items():
            if status == "204":
                continue
            for content in response["content"].values():
                assert "schema" in content, (path, method, status)
                assert "example" in content or "examples" in content, (path, method, status)


def test_writes_need_the_bearer_key_and_reads_may(spec):
    assert spec["components"]["securitySchemes"]["bearerAuth"] == {
        "type": "http", "scheme": "bearer", "description": "An API key made with `plugfit keys create NAME`."}
    for path, method, operation in operations(spec):
        if path == "/v1/health":
            assert operation["security"] == []
        elif method == "get" or path.startswith("/v1/fit-checks"):
            assert operation["security"] == [{}, {"bearerAuth": []}], (path, method)
        else:
            assert operation["security"] == [{"bearerAuth": []}], (path, method)
            assert "401" in operation["responses"], (path, method)


def test_if_match_and_etag_are_declared_under_their_real_names(spec):
    """A generated client sends the header the document names: the wire name must be
    If-Match, not a component key (which is what broke the stale-write protection)."""
    parameters = spec["components"]["parameters"]
    for path in ("/v1/plugs/{sku}", "/v1/heads/{head_id}"):
        for method in ("put", "delete"):
            operation = spec["paths"][path][method]
            names = [parameters[p["$ref"].rsplit("/", 1)[1]]["name"] if "$ref" in p else p["name"]
                     for p in operation["parameters"]]
            assert "If-Match" in names, (path, method)
            assert "428" not in operation["responses"]
            assert "412" in operation["responses"]
        get = spec["paths"][path]["get"]
        assert get["responses"]["200"]["headers"]["ETag"] == {"$ref": "#/components/headers/ETag"}
        assert spec["paths"][path]["put"]["responses"]["200"]["headers"]["ETag"]
    assert parameters["IfMatch"] == {
        "name": "If-Match", "in": "header", "required": False, "schema": {"type": "string"},
        "description": parameters["IfMatch"]["description"]}


# The client's function names: generated clients call these, so they must not change
# without a deliberate edit here (and a note in docs/changes.md).
OPERATION_IDS = {
    ("get", "/v1/health"): "get_health",
    ("get", "/v1/standard-sizes"): "get_standard_sizes",
    ("get", "/v1/plugs"): "list_plugs",
    ("post", "/v1/plugs"): "create_plug",
    ("get", "/v1/plugs/{sku}"): "get_plug",
    ("put", "/v1/plugs/{sku}"): "replace_plug",
    ("delete", "/v1/plugs/{sku}"): "delete_plug",
    ("get", "/v1/plugs/{sku}/history"): "list_plug_history",
    ("get", "/v1/plugs/{sku}/interchanges"): "find_interchanges",
    ("get", "/v1/heads"): "list_heads",
    ("post", "/v1/heads"): "create_head",
    ("get", "/v1/heads/{head_id}"): "get_head",
    ("put", "/v1/heads/{head_id}"): "replace_head",
    ("delete", "/v1/heads/{head_id}"): "delete_head",
    ("get", "/v1/heads/{head_id}/history"): "list_head_history",
    ("get", "/v1/heads/{head_id}/fitting-plugs"): "list_fitting_plugs",
    ("post", "/v1/fit-checks"): "check_fit",
    ("post", "/v1/fit-checks/diagram"): "draw_fit",
    ("post", "/v1/fit-checks/batch"): "check_build_list",
    ("post", "/v1/imports/plugs"): "import_plugs",
    ("post", "/v1/imports/heads"): "import_heads",
    ("get", "/v1/exports/plugs"): "export_plugs",
    ("get", "/v1/exports/heads"): "export_heads",
}


def test_every_operation_has_its_stable_short_operation_id(spec):
    found = {(method, path): operation.get("operationId") for path, method, operation in operations(spec)}
    assert found == OPERATION_IDS
    identifiers = list(found.values())
    assert len(set(identifiers)) == len(identifiers)
    assert all(re.fullmatch(r"[a-z]+(_[a-z]+)*", name) and len(name) <= 24 for name in identifiers)


def test_operations_are_grouped_by_tags_that_are_declared(spec):
    declared = [tag["name"] for tag in spec["tags"]]
    used = {tag for _, _, operation in operations(spec) for tag in operation["tags"]}
    assert used == set(declared)
    assert all(tag.get("description") for tag in spec["tags"])
    assert spec["paths"]["/v1/fit-checks/batch"]["post"]["tags"] == ["build-lists"]
    assert spec["paths"]["/v1/heads/{head_id}/fitting-plugs"]["get"]["tags"] == ["parts-counter"]


def test_lists_declare_their_pagination_headers(spec):
    for path, _method, operation in operations(spec):
        names = {p.get("name") for p in operation.get("parameters", [])}
        if "page" in names:
            headers = operation["responses"]["200"]["headers"]
            assert headers["X-Pagination"] == {"$ref": "#/components/headers/XPagination"}, path
            assert headers["Link"] == {"$ref": "#/components/headers/Link"}, path


def test_error_answers_are_documented_as_problems(spec):
    for name, response in spec["components"]["responses"].items():
        if "content" in response:
            assert list(response["content"]) == ["application/problem+json"], name


def test_lists_document_pagination_with_at_most_1000_per_page(spec):
    parameters = {p["name"]: p for p in spec["paths"]["/v1/plugs"]["get"]["parameters"] if "name" in p}
    assert parameters["page_size"]["schema"]["maximum"] == 1000  # contract: at most 1,000
    assert {"thread", "seat", "reach", "hex", "resistor", "page"} <= set(parameters)
    head_parameters = {p["name"] for p in spec["paths"]["/v1/heads"]["get"]["parameters"] if "name" in p}
    assert "q" in head_parameters


def test_the_documented_examples_are_valid_requests_and_answers():
    """The examples shown in the OpenAPI document load through the same schemas as real
    requests, so the documentation cannot show a body the service would refuse."""
    from schemas.answers import HeadSchema, PlugSchema
    from schemas.results import FitResultSchema
    from schemas.specs import FitCheckRequestSchema, StoredHeadSchema, StoredPlugSchema
    from service.web import examples

    assert PlugSchema().dump(StoredPlugSchema().load(examples.PLUG)) == examples.PLUG_ANSWER
    assert HeadSchema().dump(StoredHeadSchema().load(examples.HEAD)) == examples.HEAD_ANSWER
    StoredPlugSchema().load(examples.PLUG_ANSWER)  # an answer can be sent back
    StoredHeadSchema().load(examples.HEAD_ANSWER)
    FitCheckRequestSchema().load(examples.FIT_CHECK_INLINE)
    FitCheckRequestSchema().load(examples.FIT_CHECK_BY_REFERENCE)
    assert FitResultSchema().validate(examples.FIT_RESULT) == {}


def test_every_pressure_says_whether_it_is_absolute_or_gauge(spec):
    # issue 13: "15 psi" of boost was read as absolute; each pressure field now says which it is
    schemas = spec["components"]["schemas"]
    pressures = [(name, field, body) for name, schema in schemas.items()
                 for field, body in schema.get("properties", {}).items() if field.endswith("_pressure")]
    assert {field for _, field, _ in pressures} >= {"intake_pressure", "boost_pressure", "peak_pressure"}
    for name, field, body in pressures:
        description = body.get("description", "")
        assert "absolute" in description or "gauge" in description, (name, field, description)
    forced = [body for schema in schemas.values() for field, body in schema.get("properties", {}).items()
              if field == "forced_induction"]
    assert forced and all("absolute" in body["description"] and "gauge" in body["description"] for body in forced)
