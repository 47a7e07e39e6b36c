"""API keys: made by the CLI, shown once, stored as a hash; who may do what."""
from __future__ import annotations

import hashlib

import pytest
from sqlalchemy import select

from schemas.problem import PROBLEM_MEDIA_TYPE
from service.store import db
from service.store.models import ApiKey
from service.web import create_app


@pytest.fixture
def closed_app(database_url):
    """The app with PLUGFIT_REQUIRE_KEY_FOR_READS=1."""
    app = create_app({"TESTING": True, "DATABASE_URL": database_url, "REQUIRE_KEY_FOR_READS": True})
    yield app
    db.get_database(app).engine.dispose()


def test_keys_create_prints_the_key_alone_on_stdout_and_stores_only_its_hash(runner, app):
    result = runner.invoke("keys", "create", "counter-1")
    assert result.exit_code == 0, result.output
    key = result.stdout.strip()
    assert result.stdout == key + "\n"  # alone: scripts can do KEY=$(plugfit keys create NAME)
    assert key.startswith("pfk_") and len(key) >= 40
    with db.unit_of_work(app) as session:
        stored = session.scalars(select(ApiKey).where(ApiKey.name == "counter-1")).one()
        assert stored.key_hash == hashlib.sha256(key.encode()).hexdigest()
        assert key not in (stored.key_hash, stored.prefix, stored.name)


def test_a_created_key_authorises_a_write(runner, client):
    key = runner.invoke("keys", "create", "counter-1").stdout.strip()
    response = client.delete("/v1/plugs/NOPE", headers={"Authorization": f"Bearer {key}"})
    assert response.status_code == 404  # authorised, then not found


def test_two_keys_never_repeat(runner):
    first = runner.invoke("keys", "create", "a").stdout.strip()
    second = runner.invoke("keys", "create", "b").stdout.strip()
    assert first != second


def test_a_key_name_can_be_used_once(runner):
    runner.invoke("keys", "create", "a")
    result = runner.invoke("keys", "create", "a")
    assert result.exit_code != 0
    assert "exists" in result.output
    assert result.stdout == ""


def test_keys_list_shows_names_but_never_keys(runner):
    key = runner.invoke("keys", "create", "counter-1").stdout.strip()
    listing = runner.invoke("keys", "list").stdout
    assert "counter-1" in listing
    assert key not in listing


def test_a_revoked_key_is_refused(runner, client):
    key = runner.invoke("keys", "create", "leaked").stdout.strip()
    assert runner.invoke("keys", "revoke", "leaked").exit_code == 0
    response = client.delete("/v1/plugs/NOPE", headers={"Authorization": f"Bearer {key}"})
    assert response.status_code == 401
    assert runner.invoke("keys", "revoke", "leaked").exit_code != 0


@pytest.mark.parametrize("header", [None, "Bearer", "Bearer ", "Token abc", "Bearer pfk_not-a-key",
                                    "Bearer " + "x" * 5000])
def test_a_write_with_a_missing_or_wrong_key_is_a_401_problem(client, header):
    headers = {"Authorization": header} if header is not None else {}
    response = client.delete("/v1/plugs/ANY", headers=headers)
    assert response.status_code == 401
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    assert response.headers["WWW-Authenticate"].startswith("Bearer")


def test_the_bearer_scheme_name_is_case_insensitive(client, api_key):
    response = client.delete("/v1/plugs/NOPE", headers={"Authorization": f"bearer {api_key}"})
    assert response.status_code == 404


def test_reads_are_open_by_default(client):
    assert client.get("/v1/plugs").status_code == 200
    assert client.get("/v1/heads").status_code == 200
    assert client.get("/v1/standard-sizes").status_code == 200


def test_when_reads_need_a_key_they_are_401_without_one(closed_app, api_key):
    client = closed_app.test_client()
    for path in ("/v1/plugs", "/v1/heads", "/v1/standard-sizes", "/v1/plugs/ANY"):
        response = client.get(path)
        assert response.status_code == 401, path
        assert response.mimetype == PROBLEM_MEDIA_TYPE
    assert client.get("/v1/plugs", headers={"Authorization": f"Bearer {api_key}"}).status_code == 200


def test_health_and_the_openapi_document_stay_open_when_reads_need_a_key(closed_app):
    client = closed_app.test_client()
    assert client.get("/v1/health").status_code == 200
    assert client.get("/v1/openapi.json").status_code == 200


def test_unknown_paths_are_404_not_401_even_when_reads_need_a_key(closed_app):
    assert closed_app.test_client().get("/v1/nothing-here").status_code == 404
