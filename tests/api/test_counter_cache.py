"""The parts counter reuses its rankings only while no plug has changed, on SQLite and,
under PLUGFIT_TEST_POSTGRES_URL, PostgreSQL: the database counts every change to plugs
itself (migration 0004), and every process checks that count per request
(service/store/records_cache.py)."""
from __future__ import annotations

import json

import pytest
from sqlalchemy import text

from service.store import db
from service.usecases import parts_search
from service.web import create_app
from service.web.auth import create_key
from tests.api.test_counter import HEAD, plug

FITTING = "/v1/heads/T-HEAD/fitting-plugs"
# Hand-worked as in test_counter.py: port depth 17.5 mm, piston 8 mm beyond it (25.5 mm
# from the seat); a 19 mm reach on 1.5 mm is flush, the tip at 17.5 + firing end.
FLUSH, DEEP_TIP = plug("K-FLUSH", 19.0, 2.0), plug("K-DEEP-TIP", 19.0, 3.0)


def generations(app) -> tuple[int, int]:
    """The generations of plugs and heads, each 0 while its row is missing (the test
    harness empties every table between tests on PostgreSQL)."""
    with db.get_database(app).engine.connect() as connection:
        found = dict(connection.execute(text("SELECT name, generation FROM table_generations")).all())
    return found.get("plugs", 0), found.get("heads", 0)


def generation(app) -> int:
    return generations(app)[0]


def skus(client, path: str = FITTING) -> list[str]:
    response = client.get(path)
    assert response.status_code == 200, response.get_data(as_text=True)
    return [entry["sku"] for entry in response.get_json()]


def test_every_write_to_plugs_raises_their_generation_and_a_head_write_that_of_heads(app, client, auth):
    def raised_by(write) -> bool:
        before = generation(app)
        write()
        return generation(app) > before

    assert raised_by(lambda: client.post("/v1/plugs", json=FLUSH, headers=auth))
    assert raised_by(lambda: client.put("/v1/plugs/K-FLUSH", json={**FLUSH, "quantity_on_hand": 0}, headers=auth))
    lines = "\n".join(json.dumps(p) for p in (DEEP_TIP, plug("K-OTHER", 19.0, 2.5))) + "\n"
    assert raised_by(lambda: client.post("/v1/imports/plugs", data=lines,
                                         headers={**auth, "Content-Type": "application/x-ndjson"}))
    assert raised_by(lambda: client.delete("/v1/plugs/K-OTHER", headers=auth))

    def by_hand() -> None:  # a script or an operator at the SQL prompt, past the service
        with db.get_database(app).engine.begin() as connection:
            connection.execute(text("UPDATE plugs SET location = 'bin 9'"))

    assert raised_by(by_hand)
    heads_before = generations(app)[1]
    assert not raised_by(lambda: client.post("/v1/heads", json=HEAD, headers=auth))
    assert generations(app)[1] > heads_before  # heads have a count of their own
    # A write that is rolled back leaves the count where it was.
    assert not raised_by(lambda: client.post("/v1/plugs", json={**FLUSH, "sku": "K-FLUSH"}, headers=auth))


@pytest.fixture
def rankings_built(monkeypatch) -> list:
    """The ports parts_search.rank_fitting is called for, in order."""
    built = []
    original = parts_search.rank_fitting

    def counting(*args, **kwargs):
        built.append(args[1])
        return original(*args, **kwargs)

    monkeypatch.setattr(parts_search, "rank_fitting", counting)
    return built


def test_the_ranking_is_built_once_and_again_after_any_change_to_plugs(client, auth, rankings_built):
    built = rankings_built
    client.post("/v1/heads", json=HEAD, headers=auth)
    client.post("/v1/plugs", json=FLUSH, headers=auth)
    assert skus(client) == ["K-FLUSH"]
    assert skus(client) == ["K-FLUSH"]
    assert skus(client, FITTING + "?page=1") == ["K-FLUSH"]
    assert len(built) == 1  # three pages, one ranking
    client.post("/v1/plugs", json=DEEP_TIP, headers=auth)
    assert skus(client) == ["K-FLUSH", "K-DEEP-TIP"]
    assert len(built) == 2
    assert skus(client, FITTING + "?in_stock=true") == ["K-FLUSH", "K-DEEP-TIP"]  # other filters: their own
    assert len(built) == 3


def test_without_its_counter_rows_nothing_is_reused(app, client, auth, rankings_built):
    client.post("/v1/heads", json=HEAD, headers=auth)
    client.post("/v1/plugs", json=FLUSH, headers=auth)
    with db.get_database(app).engine.begin() as connection:  # emptied by hand
        connection.execute(text("DELETE FROM table_generations WHERE name = 'heads'"))
    assert skus(client) == skus(client) == ["K-FLUSH"]
    assert len(rankings_built) == 2
    client.post("/v1/heads", json={**HEAD, "head_id": "T-HEAD-2"}, headers=auth)  # the row comes back
    assert skus(client) == skus(client) == ["K-FLUSH"]
    assert len(rankings_built) == 3


@pytest.fixture
def second_worker(database_url):
    """Another app on the same database with its own cache: a second gunicorn worker, or
    a second server."""
    other = create_app({"TESTING": True, "DATABASE_URL": database_url})
    with db.unit_of_work(other) as session:
        key = create_key(session, "worker-b").key
        session.commit()
    yield other.test_client(), {"Authorization": f"Bearer {key}"}


def stock_the_test_head(client, auth) -> None:
    """The test head and two plugs that fit it, listed once (so the ranking is kept)."""
    client.post("/v1/heads", json=HEAD, headers=auth)
    client.post("/v1/plugs", json=FLUSH, headers=auth)
    client.post("/v1/plugs", json=DEEP_TIP, headers=auth)
    assert skus(client) == ["K-FLUSH", "K-DEEP-TIP"]


def test_a_change_made_through_another_worker_is_listed_on_the_next_request(client, auth, second_worker):
    other, other_auth = second_worker
    stock_the_test_head(client, auth)
    assert skus(other) == ["K-FLUSH", "K-DEEP-TIP"]  # both workers hold a ranking now

    # A firing end of 7 mm puts the tip at 25 mm, 0.5 mm from the piston: PISTON_CONTACT.
    changed = other.put("/v1/plugs/K-DEEP-TIP", json={**DEEP_TIP, "firing_end": 7.0}, headers=other_auth)
    assert changed.status_code == 200
    assert skus(client) == ["K-FLUSH"]  # never the failing plug, not even once
    other.put("/v1/plugs/K-FLUSH", json={**FLUSH, "quantity_on_hand": 0}, headers=other_auth)
    assert skus(client, FITTING + "?in_stock=true") == []
    other.delete("/v1/plugs/K-FLUSH", headers=other_auth)
    assert skus(client) == []
    lines = json.dumps(plug("K-IMPORTED", 19.0, 2.0)) + "\n"
    other.post("/v1/imports/plugs", data=lines, headers={**other_auth, "Content-Type": "application/x-ndjson"})
    assert skus(client) == ["K-IMPORTED"]


def test_interchanges_follow_changes_too(client, auth, second_worker):
    other, other_auth = second_worker
    for line in (FLUSH, plug("K-TWIN", 19.0, 2.0)):
        client.post("/v1/plugs", json=line, headers=auth)
    assert skus(client, "/v1/plugs/K-FLUSH/interchanges") == ["K-TWIN"]
    other.post("/v1/plugs", json=plug("K-TWIN-2", 19.0, 2.0), headers=other_auth)
    assert skus(client, "/v1/plugs/K-FLUSH/interchanges") == ["K-TWIN", "K-TWIN-2"]


def test_a_head_changed_through_another_worker_is_judged_anew(client, auth, second_worker):
    other, other_auth = second_worker
    stock_the_test_head(client, auth)
    # piston_clearance 4 mm puts the piston 21.5 mm from the seat: K-DEEP-TIP's tip at
    # 20.5 mm leaves 1.0 mm, under the 1.5 mm minimum (PISTON_CONTACT, left out);
    # K-FLUSH's at 19.5 mm leaves 2.0 mm.
    assert other.put("/v1/heads/T-HEAD", json={**HEAD, "piston_clearance": 4.0},
                     headers=other_auth).status_code == 200
    assert skus(client) == ["K-FLUSH"]
    assert other.delete("/v1/heads/T-HEAD", headers=other_auth).status_code == 204
    assert client.get(FITTING).status_code == 404
