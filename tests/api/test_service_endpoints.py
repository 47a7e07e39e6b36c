"""GET /v1/health, GET /v1/standard-sizes, and the request log line."""
from __future__ import annotations

import io
import json
import logging

from sqlalchemy.exc import OperationalError

from schemas.problem import PROBLEM_MEDIA_TYPE
from schemas.standard_sizes import StandardSizesSchema
from service.catalog_loader import load_catalog
from service.store import db
from service.web.request_log import REQUEST_LOGGER, JsonLineFormatter


def test_health_reports_the_service_and_its_database(client):
    response = client.get("/v1/health")
    assert response.status_code == 200
    body = response.get_json()
    assert body["status"] == "ok" and body["database"] == "ok"


def test_health_is_a_503_problem_when_the_database_does_not_answer(client, monkeypatch):
    def unreachable(self):
        raise OperationalError("SELECT 1", {}, Exception("unable to open database file"))

    monkeypatch.setattr(db.Database, "ping", unreachable)
    response = client.get("/v1/health")
    assert response.status_code == 503
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    body = response.get_json(force=True)
    assert body["detail"] == "The database does not answer."
    assert "unable to open" not in response.get_data(as_text=True)


def test_standard_sizes_serve_the_loaded_catalogue_as_documented(client):
    response = client.get("/v1/standard-sizes")
    assert response.status_code == 200
    document = response.get_json()
    # Loading with unknown members refused: the served document and its schema agree.
    assert StandardSizesSchema().validate(document) == {}
    assert document["catalog_version"] == load_catalog().version
    designations = [thread["designation"] for thread in document["threads"]]
    assert "M14x1.25" in designations  # ISO 28741 / contract: the common spark-plug size
    assert all(thread["source"] for thread in document["threads"])
    assert any("guidance" in caution for caution in document["cautions"])


def test_each_request_writes_one_structured_log_line(client):
    stream = io.StringIO()
    handler = logging.StreamHandler(stream)
    handler.setFormatter(JsonLineFormatter())
    logger = logging.getLogger(REQUEST_LOGGER)
    logger.addHandler(handler)
    try:
        client.get("/v1/plugs?page_size=1")
        client.get("/v1/no-such-path")
    finally:
        logger.removeHandler(handler)
    lines = [json.loads(line) for line in stream.getvalue().splitlines()]
    assert [(line["method"], line["path"], line["status"]) for line in lines] == [
        ("GET", "/v1/plugs", 200), ("GET", "/v1/no-such-path", 404)]
    assert all(isinstance(line["duration_ms"], float) and line["duration_ms"] >= 0 for line in lines)
    assert all(line["event"] == "request" for line in lines)
