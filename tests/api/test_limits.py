"""Limits (the contract's defaults: body 32 MiB, batch 50,000 items, page 1,000; each
configurable): every refusal is a problem+json that states the limit, in `detail` and
as the `limit` member."""
from __future__ import annotations

import json

import pytest
import requests

from schemas.problem import PROBLEM_MEDIA_TYPE
from service import config
from service.web import create_app
from tests.live_server import running_server

MIB = 1024 * 1024


def refused(response, status: int, limit: int) -> dict:
    assert response.status_code == status, response.get_data(as_text=True)
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    body = response.get_json(force=True)
    assert body["limit"] == limit
    assert f"{limit}" in body["detail"]
    return body


def test_the_defaults_are_the_contracts():
    assert config.Defaults.MAX_BODY_BYTES == 32 * MIB      # contract: request body 32 MiB
    assert config.Defaults.MAX_BATCH_ITEMS == 50_000       # contract: batch 50,000 items
    assert config.Defaults.MAX_PAGE_SIZE == 1000           # contract: page_size at most 1,000


def test_a_body_over_the_limit_is_a_413_stating_the_limit(database_url):
    client = create_app({"TESTING": True, "DATABASE_URL": database_url, "MAX_BODY_BYTES": 2000}).test_client()
    body = refused(client.post("/v1/fit-checks", data=b"{" + b" " * 3000 + b"}",
                               headers={"Content-Type": "application/json"}), 413, 2000)
    assert body["type"] == "tag:plugfit,2025:problem/body-too-large"


def test_a_page_size_over_the_limit_is_a_422_stating_the_limit(client, database_url):
    refused(client.get("/v1/plugs", query_string={"page_size": 1001}), 422, 1000)
    lowered = create_app({"TESTING": True, "DATABASE_URL": database_url, "MAX_PAGE_SIZE": 20}).test_client()
    body = refused(lowered.get("/v1/heads", query_string={"page_size": 21}), 422, 20)
    assert list(body["errors"]) == ["page_size"]


def test_a_batch_over_the_item_limit_is_a_413_stating_the_limit(database_url):
    client = create_app({"TESTING": True, "DATABASE_URL": database_url, "MAX_BATCH_ITEMS": 3}).test_client()
    item = {"plug": {"thread": "M14x1.25", "seat": "flat", "reach": 19.0},
            "head": {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5}}
    assert client.post("/v1/fit-checks/batch", json={"items": [item] * 3}).status_code == 200
    refused(client.post("/v1/fit-checks/batch", json={"items": [item] * 4}), 413, 3)


def test_a_field_out_of_range_is_a_422_naming_the_field_and_its_bound(client):
    response = client.post("/v1/fit-checks", json={
        "plug": {"thread": "M14x1.25", "seat": "flat", "reach": 61},
        "head": {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5}})
    assert response.status_code == 422
    # schemas/specs.py MAX_REACH_MM: 60 mm is past any standard reach (about 26.5 mm).
    assert response.get_json()["errors"] == {"plug": {"reach": ["must be at most 60 mm"]}}


@pytest.fixture(scope="module")
def small_body_server(tmp_path_factory, make_empty_database):
    with running_server(make_empty_database(), tmp_path_factory.mktemp("limits"),
                        extra_env={"PLUGFIT_MAX_BODY_BYTES": "100000"}) as live:
        yield live


def chunked(payload: bytes, piece: int = 8192):
    """A generator body: requests sends it with Transfer-Encoding: chunked, no length."""
    for start in range(0, len(payload), piece):
        yield payload[start:start + piece]


@pytest.mark.server
def test_a_chunked_body_over_the_limit_is_a_413_not_silently_cut_short(small_body_server):
    check = json.dumps({"plug": {"thread": "M14x1.25", "seat": "flat", "reach": 19.0},
                        "head": {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5}}).encode()
    url = small_body_server.base_url + "/v1/fit-checks"
    headers = {"Content-Type": "application/json"}
    within = requests.post(url, data=chunked(check + b" " * 90_000), headers=headers, timeout=30)
    assert within.status_code == 200
    # Cut at the limit, this body would still be valid JSON; it must be refused whole.
    over = requests.post(url, data=chunked(check + b" " * 200_000), headers=headers, timeout=30)
    assert over.status_code == 413
    assert over.headers["Content-Type"].startswith(PROBLEM_MEDIA_TYPE)
    assert over.json()["limit"] == 100_000


@pytest.mark.server
def test_a_chunked_replace_import_over_the_limit_deletes_nothing(small_body_server):
    """Read only up to the limit, a replace import would see a shorter file and delete
    every plug named in the part cut off."""
    auth = small_body_server.auth
    header = "sku,thread,seat,reach_mm\n"
    originals = "".join(f"OLD-{n:05d},M14x1.25,flat,19\n" for n in range(1000))   # 27 kB
    newcomers = "".join(f"NEW-{n:05d},M14x1.25,flat,19\n" for n in range(3000))   # 81 kB
    url = small_body_server.base_url + "/v1/imports/plugs"
    first = requests.post(url, data=(header + originals).encode(),
                          headers={**auth, "Content-Type": "text/csv"}, timeout=60)
    assert first.status_code == 200, first.text
    stored = first.json()["added"]
    # The originals come last: a file cut at the limit would name none of them, and a
    # replace import would delete them all.
    response = requests.post(url + "?mode=replace", data=chunked((header + newcomers + originals).encode()),
                             headers={**auth, "Content-Type": "text/csv"}, timeout=60)
    assert response.status_code == 413
    listing = requests.get(small_body_server.base_url + "/v1/plugs", params={"page_size": 1}, timeout=30)
    assert json.loads(listing.headers["X-Pagination"])["total"] == stored
