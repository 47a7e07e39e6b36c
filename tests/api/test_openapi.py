"""The OpenAPI document: where it is served, and that every operation is described."""
from __future__ import annotations

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


def test_if_match_is_documented_as_optional(spec):
    put = spec["paths"]["/v1/plugs/{sku}"]["put"]
    refs = [parameter.get("$ref") for parameter in put["parameters"]]
    assert "#/components/parameters/IF_MATCH_OPTIONAL" in refs
    assert spec["components"]["parameters"]["IF_MATCH_OPTIONAL"]["required"] is False
    assert "428" not in put["responses"]
    assert "412" in put["responses"]


def test_lists_document_pagination_with_at_most_1000_per_page(spec):
    parameters = {p["name"]: p for p in spec["paths"]["/v1/plugs"]["get"]["parameters"] if "name" in p}
    assert parameters["page_size"]["schema"]["maximum"] == 1000  # contract: at most 1,000
    assert {"thread", "seat", "reach", "hex", "resistor", "page"} <= set(parameters)
    head_parameters = {p["name"] for p in spec["paths"]["/v1/heads"]["get"]["parameters"] if "name" in p}
    assert "q" in head_parameters


def test_the_documented_examples_are_valid_requests_and_answers():
    """The examples shown in the OpenAPI document load through the same schemas as real
    requests, so the documentation cannot show a body the service would refuse."""
    from schemas.results import FitResultSchema
    from schemas.specs import FitCheckRequestSchema, StoredHeadSchema, StoredPlugSchema
    from service.web import examples

    StoredPlugSchema().load(examples.PLUG)
    StoredHeadSchema().load(examples.HEAD)
    FitCheckRequestSchema().load(examples.FIT_CHECK_INLINE)
    FitCheckRequestSchema().load(examples.FIT_CHECK_BY_REFERENCE)
    assert FitResultSchema().validate(examples.FIT_RESULT) == {}
