"""Every error is an RFC 9457 problem, as the OpenAPI document describes it."""
from __future__ import annotations

import json

import pytest

from schemas.problem import PROBLEM_MEDIA_TYPE
from service.store import db
from service.web import create_app
from tests.api.openapi_validation import resolve, response_schema, violations


@pytest.fixture
def spec(client):
    return client.get("/v1/openapi.json").get_json()


def assert_documented_problem(spec, response, path, method, status):
    """The answer is problem+json, its status matches, and it conforms to the schema the
    OpenAPI document gives for this operation and status, with no undocumented member."""
    assert response.status_code == status
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    body = response.get_json(force=True)
    assert body["status"] == status
    schema = response_schema(spec, path, method, status, PROBLEM_MEDIA_TYPE)
    assert violations(spec, schema, body) == []
    documented = set(resolve(spec, schema)["properties"])
    assert set(body) <= documented
    return body


def test_the_problem_schema_is_the_documented_error_of_every_operation(spec):
    for path, operations in spec["paths"].items():
        for method, operation in operations.items():
            if method == "parameters":
                continue
            default = resolve(spec, operation["responses"]["default"])
            assert PROBLEM_MEDIA_TYPE in default["content"], (path, method)
            for status, response in operation["responses"].items():
                if status.startswith(("4", "5")):
                    content = resolve(spec, response)["content"]
                    assert list(content) == [PROBLEM_MEDIA_TYPE], (path, method, status)


def test_an_unknown_path_is_a_404_problem_not_an_html_page(client):
    response = client.get("/v1/no-such-thing")
    assert response.status_code == 404
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    assert response.get_json(force=True) == {
        "type": "tag:plugfit,2025:problem/not-found", "title": "Not Found", "status": 404,
        "detail": "Nothing is served at this path."}


def test_a_wrong_method_is_a_405_problem_that_lists_the_allowed_ones(client):
    response = client.patch("/v1/plugs")
    assert response.status_code == 405
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    assert set(response.headers["Allow"].replace(" ", "").split(",")) >= {"GET", "POST"}


def test_a_body_over_the_limit_is_a_413_problem_naming_the_setting(database_url):
    app = create_app({"TESTING": True, "DATABASE_URL": database_url, "MAX_BODY_BYTES": 1000})
    try:
        response = app.test_client().post("/v1/fit-checks", data=b"{" + b" " * 2000 + b"}",
                                          content_type="application/json")
        assert response.status_code == 413
        assert response.mimetype == PROBLEM_MEDIA_TYPE
        body = response.get_json(force=True)
        assert "1000 bytes" in body["detail"] and "PLUGFIT_MAX_BODY_BYTES" in body["detail"]
    finally:
        db.get_database(app).engine.dispose()


def test_a_body_that_is_not_json_is_a_400_problem(client, spec):
    response = client.post("/v1/fit-checks", data='{"plug": ', content_type="application/json")
    body = assert_documented_problem(spec, response, "/v1/fit-checks", "post", 400)
    assert body["detail"] == "The request body is not valid JSON."


def test_a_form_encoded_body_is_a_415_problem_that_says_to_send_json(client):
    # curl -d without -H 'Content-Type: application/json' sends a form.
    response = client.post("/v1/fit-checks", data="plug=1", content_type="application/x-www-form-urlencoded")
    assert response.status_code == 415
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    assert "Content-Type: application/json" in response.get_json(force=True)["detail"]


def test_validation_errors_mirror_the_request_body_without_a_location_level(client, spec):
    response = client.post("/v1/fit-checks", json={
        "plug": {"thread": "M14x1.25", "seat": "flat", "reach": "3 kg"},
        "head": {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5}})
    body = assert_documented_problem(spec, response, "/v1/fit-checks", "post", 422)
    assert list(body["errors"]) == ["plug"]
    assert list(body["errors"]["plug"]) == ["reach"]
    assert body["type"] == "tag:plugfit,2025:problem/validation"


def test_query_string_errors_name_the_parameter(client, spec):
    response = client.get("/v1/plugs?page_size=0")
    body = assert_documented_problem(spec, response, "/v1/plugs", "get", 422)
    assert list(body["errors"]) == ["page_size"]


def test_an_unhandled_exception_is_a_500_problem_without_a_stack_trace(app, caplog):
    def explode():
        raise RuntimeError("secret path /etc/plugfit and SELECT * FROM api_keys")

    app.add_url_rule("/v1/explode", "explode", explode)
    response = app.test_client().get("/v1/explode")
    assert response.status_code == 500
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    text = response.get_data(as_text=True)
    assert "Traceback" not in text and "secret" not in text and "SELECT" not in text
    assert json.loads(text) == {
        "type": "tag:plugfit,2025:problem/internal", "title": "Internal Server Error", "status": 500,
        "detail": "The service failed while answering; the failure has been logged."}
    # The operator still gets the details, in the log.
    assert any("RuntimeError" in (record.exc_text or "") or record.exc_info for record in caplog.records)


def test_a_write_that_lost_a_race_is_a_409_problem_not_a_500(app):
    """An import racing a PUT on the same plug (the malformed-request run found it): the
    import's version-guarded UPDATE matches no row; nothing is written, the client retries."""
    from sqlalchemy.orm.exc import StaleDataError

    def lose_the_race():
        raise StaleDataError("UPDATE statement on table 'plugs' expected to update 1 row(s); 0 were matched.")

    app.add_url_rule("/v1/race", "race", lose_the_race)  # a GET: no key needed to reach it
    response = app.test_client().get("/v1/race")
    assert response.status_code == 409
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    assert response.get_json()["type"] == "tag:plugfit,2025:problem/conflict"
    assert "retry" in response.get_json()["detail"]


def test_a_body_nested_thousands_deep_is_a_400_problem_not_a_500(client):
    response = client.post("/v1/fit-checks", data="[" * 100_000 + "]" * 100_000, content_type="application/json")
    assert response.status_code == 400
    assert response.mimetype == PROBLEM_MEDIA_TYPE


def test_a_page_number_past_any_database_offset_is_a_422_naming_page(client):
    response = client.get("/v1/plugs?page=99999999999999999999999")
    assert response.status_code == 422
    assert list(response.get_json(force=True)["errors"]) == ["page"]


def test_a_busy_or_unreachable_database_is_a_503_problem_with_retry_after(app, monkeypatch):
    from sqlalchemy.exc import OperationalError

    from service.store import repository

    def locked(*args, **kwargs):
        raise OperationalError("SELECT", {}, Exception("database is locked"))

    monkeypatch.setattr(repository.Repository, "get", locked)
    response = app.test_client().get("/v1/plugs/ANY")
    assert response.status_code == 503
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    assert response.headers["Retry-After"] == "1"
    body = response.get_json(force=True)
    assert body["type"] == "tag:plugfit,2025:problem/database-unavailable"
    assert "locked" not in body["detail"]
