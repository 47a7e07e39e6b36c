"""No lost updates (If-Match against the row version, checked atomically with the write)
and the append-only history of every change, on SQLite and, under
PLUGFIT_TEST_POSTGRES_URL, PostgreSQL."""
from __future__ import annotations

import pytest
from sqlalchemy import text
from sqlalchemy.exc import DatabaseError

from service.store import db, repository
from service.web import create_app
from service.web.auth import create_key
from tests.api.problems import problem

PLUG = {"sku": "LOST-UPDATE-PLUG", "thread": "M14x1.25", "seat": "flat", "reach": 19.0, "gasket_thickness": 1.5,
        "firing_end": 4.0, "quantity_on_hand": 10, "location": "A1"}
HEAD = {"head_id": "LU-HEAD-1", "thread": "M14x1.25", "seat": "flat", "port_depth": 17.5,
        "piston_clearance": 8.0, "description": "lost-update test head"}

RESOURCES = [
    pytest.param("plugs", PLUG, "sku", "quantity_on_hand", (4, 9), id="plug"),
    pytest.param("heads", HEAD, "head_id", "description", ("counter A's note", "counter B's note"), id="head"),
]


@pytest.fixture
def second_counter(database_url):
    """Another client with its own app, engine and API key: a second counter terminal
    (or a second server process) on the same database."""
    app = create_app({"TESTING": True, "DATABASE_URL": database_url})
    with db.unit_of_work(app) as session:
        key = create_key(session, "counter-b").key
        session.commit()
    yield app.test_client(), {"Authorization": f"Bearer {key}"}


@pytest.mark.parametrize("collection, record, key, field, values", RESOURCES)
def test_of_two_clients_holding_the_same_etag_the_first_put_wins_and_the_second_gets_412(
        client, auth, second_counter, collection, record, key, field, values):
    other, other_auth = second_counter
    url = f"/v1/{collection}/{record[key]}"
    assert client.post(f"/v1/{collection}", json=record, headers=auth).status_code == 201
    tag_a = client.get(url).headers["ETag"]
    tag_b = other.get(url).headers["ETag"]
    assert tag_a == tag_b

    first = client.put(url, json={**record, field: values[0]}, headers={**auth, "If-Match": tag_a})
    assert first.status_code == 200
    body = problem(other.put(url, json={**record, field: values[1]}, headers={**other_auth, "If-Match": tag_b}), 412)
    assert body["type"] == "tag:plugfit,2025:problem/precondition-failed"
    # The newer data survived, and the loser's tag still cannot delete it.
    assert other.get(url).get_json()[field] == values[0]
    problem(other.delete(url, headers={**other_auth, "If-Match": tag_b}), 412)
    assert client.get(url).status_code == 200
    # With the current tag the second client may go ahead.
    current = other.get(url).headers["ETag"]
    assert other.put(url, json={**record, field: values[1]},
                     headers={**other_auth, "If-Match": current}).status_code == 200


@pytest.mark.parametrize("collection, record, key, field, values", RESOURCES)
def test_a_write_that_lands_between_the_etag_check_and_the_update_still_gets_412(
        app, client, auth, monkeypatch, collection, record, key, field, values):
    """The If-Match comparison and the UPDATE are one step: the UPDATE is conditional on
    the version the check saw (`WHERE version = :read`), so a writer slipping in between
    makes it change nothing, and the request is refused instead of overwriting."""
    url = f"/v1/{collection}/{record[key]}"
    assert client.post(f"/v1/{collection}", json=record, headers=auth).status_code == 201
    tag = client.get(url).headers["ETag"]
    original_replace = repository.Repository.replace
    rivals = []

    def replace_after_a_rival_commits(self, row, document):
        if not rivals:  # the first request to get here; the rival's own call goes straight through
            rivals.append(create_app({"TESTING": True, "DATABASE_URL": app.config["DATABASE_URL"]}).test_client())
            assert rivals[0].put(url, json={**record, field: values[1]}, headers=auth).status_code == 200
        return original_replace(self, row, document)

    monkeypatch.setattr(repository.Repository, "replace", replace_after_a_rival_commits)
    problem(client.put(url, json={**record, field: values[0]}, headers={**auth, "If-Match": tag}), 412)
    monkeypatch.undo()
    assert rivals, "the rival write did not run"
    assert client.get(url).get_json()[field] == values[1]


def test_a_delete_racing_past_the_etag_check_is_a_412_and_the_rivals_change_survives(app, client, auth, monkeypatch):
    url = f"/v1/plugs/{PLUG['sku']}"
    tag = client.post("/v1/plugs", json=PLUG, headers=auth).headers["ETag"]
    original_delete = repository.Repository.delete
    rivals = []

    def delete_after_a_rival_commits(self, row):
        rival = create_app({"TESTING": True, "DATABASE_URL": app.config["DATABASE_URL"]}).test_client()
        rivals.append(rival.put(url, json={**PLUG, "quantity_on_hand": 99}, headers=auth).status_code)
        return original_delete(self, row)

    monkeypatch.setattr(repository.Repository, "delete", delete_after_a_rival_commits)
    problem(client.delete(url, headers={**auth, "If-Match": tag}), 412)
    monkeypatch.undo()
    assert rivals == [200]
    assert client.get(url).get_json()["quantity_on_hand"] == 99
    assert [entry["action"] for entry in history(client, url)] == ["replace", "create"]


def test_without_if_match_the_last_write_wins(client, auth):
    url = f"/v1/plugs/{PLUG['sku']}"
    client.post("/v1/plugs", json=PLUG, headers=auth)
    assert client.put(url, json={**PLUG, "quantity_on_hand": 1}, headers=auth).status_code == 200
    assert client.put(url, json={**PLUG, "quantity_on_hand": 2}, headers=auth).status_code == 200
    assert client.get(url).get_json()["quantity_on_hand"] == 2


def history(client, url: str, **query) -> list[dict]:
    response = client.get(url + "/history", query_string=query)
    assert response.status_code == 200, response.get_data(as_text=True)
    return response.get_json()


@pytest.mark.parametrize("collection, record, key, field, values", RESOURCES)
def test_create_replace_and_delete_each_leave_a_history_entry_with_who_when_before_and_after(
        client, auth, collection, record, key, field, values):
    url = f"/v1/{collection}/{record[key]}"
    created = client.post(f"/v1/{collection}", json=record, headers=auth).get_json()
    replaced = client.put(url, json={**record, field: values[0]}, headers=auth).get_json()
    assert client.delete(url, headers=auth).status_code == 204

    entries = history(client, url, order="oldest_first")
    assert [entry["action"] for entry in entries] == ["create", "replace", "delete"]
    assert {entry["actor"] for entry in entries} == {"test-suite"}  # the API key's name (conftest)
    assert {entry["source"] for entry in entries} == {"api"}
    assert [(e["version_before"], e["version_after"]) for e in entries] == [(None, 1), (1, 2), (2, None)]
    assert entries[0]["before"] is None and entries[0]["after"] == created
    assert entries[1]["before"] == created and entries[1]["after"] == replaced
    assert entries[2]["before"] == replaced and entries[2]["after"] is None
    stamps = [entry["changed_at"] for entry in entries]
    assert stamps == sorted(stamps) and all(stamp.endswith("+00:00") for stamp in stamps)
    # Newest first by default; the history outlives the deleted record.
    assert [entry["action"] for entry in history(client, url)] == ["delete", "replace", "create"]


def test_a_refused_write_leaves_no_history_entry(client, auth):
    url = f"/v1/plugs/{PLUG['sku']}"
    tag = client.post("/v1/plugs", json=PLUG, headers=auth).headers["ETag"]
    client.put(url, json={**PLUG, "quantity_on_hand": 3}, headers={**auth, "If-Match": tag})
    problem(client.put(url, json={**PLUG, "quantity_on_hand": 4}, headers={**auth, "If-Match": tag}), 412)
    problem(client.put(url, json={**PLUG, "reach": -1}, headers=auth), 422)
    assert [entry["action"] for entry in history(client, url)] == ["replace", "create"]


def test_history_pages_with_page_and_page_size(client, auth):
    url = f"/v1/plugs/{PLUG['sku']}"
    client.post("/v1/plugs", json=PLUG, headers=auth)
    for quantity in range(1, 6):
        client.put(url, json={**PLUG, "quantity_on_hand": quantity}, headers=auth)
    response = client.get(url + "/history", query_string={"page": 2, "page_size": 2})
    assert response.status_code == 200
    assert [entry["after"]["quantity_on_hand"] for entry in response.get_json()] == [3, 2]
    assert '"total": 6' in response.headers["X-Pagination"]
    problem(client.get(url + "/history", query_string={"page_size": 1001}), 422)


def test_the_history_of_an_identifier_never_used_is_a_404(client):
    assert problem(client.get("/v1/plugs/NEVER-1/history"), 404)["errors"] == {"sku": ["no plug 'NEVER-1'"]}
    problem(client.get("/v1/heads/NEVER-1/history"), 404)


def test_a_record_with_no_recorded_change_has_an_empty_history(app, client):
    with db.unit_of_work(app) as session:
        repository.plugs(session).add({"sku": "QUIET-1", "thread": "M14x1.25", "seat": "flat"})
        session.commit()  # written without going through the API: no entry
    assert history(client, "/v1/plugs/QUIET-1") == []


@pytest.mark.parametrize("statement", ["UPDATE change_history SET actor = 'someone else'",
                                       "DELETE FROM change_history"])
def test_the_database_itself_refuses_to_rewrite_history(app, client, auth, statement):
    client.post("/v1/plugs", json=PLUG, headers=auth)
    engine = db.get_database(app).engine
    with pytest.raises(DatabaseError, match="append-only"), engine.begin() as connection:
        connection.execute(text(statement))
    assert history(client, f"/v1/plugs/{PLUG['sku']}")[0]["actor"] == "test-suite"


IMPORT_HEADER = "sku,thread,seat,reach_mm,quantity_on_hand\n"


def import_plugs(client, auth, rows: str, query: str = ""):
    response = client.post(f"/v1/imports/plugs{query}", data=IMPORT_HEADER + rows,
                           headers={**auth, "Content-Type": "text/csv"})
    assert response.status_code == 200, response.get_data(as_text=True)
    return response.get_json()


def test_an_import_records_each_record_it_adds_changes_and_deletes_and_nothing_for_the_unchanged(client, auth):
    import_plugs(client, auth, "IMP-1,M14x1.25,flat,19,5\nIMP-2,M14x1.25,flat,19,5\nIMP-3,M14x1.25,flat,19,5\n")
    # replace: IMP-1 unchanged, IMP-2 changed, IMP-3 gone, IMP-4 new
    report = import_plugs(client, auth, "IMP-1,M14x1.25,flat,19,5\nIMP-2,M14x1.25,flat,19,7\n"
                                        "IMP-4,M14x1.25,flat,12.7,1\n", "?mode=replace")
    assert (report["unchanged"], report["changed"], report["deleted"], report["added"]) == (1, 1, 1, 1)

    def actions(sku):
        return [(e["action"], e["source"], e["actor"], e["version_before"], e["version_after"])
                for e in history(client, f"/v1/plugs/{sku}", order="oldest_first")]

    assert actions("IMP-1") == [("create", "import", "test-suite", None, 1)]
    assert actions("IMP-2") == [("create", "import", "test-suite", None, 1), ("replace", "import", "test-suite", 1, 2)]
    assert actions("IMP-3") == [("create", "import", "test-suite", None, 1), ("delete", "import", "test-suite", 1, None)]
    assert actions("IMP-4") == [("create", "import", "test-suite", None, 1)]
    changed = history(client, "/v1/plugs/IMP-2")[0]
    assert (changed["before"]["quantity_on_hand"], changed["after"]["quantity_on_hand"]) == (5, 7)
    # What the history shows after a create is what GET shows.
    assert history(client, "/v1/plugs/IMP-4")[0]["after"] == client.get("/v1/plugs/IMP-4").get_json()
    assert history(client, "/v1/plugs/IMP-3")[0]["after"] is None


def test_a_dry_run_import_records_no_history(client, auth):
    import_plugs(client, auth, "DRY-1,M14x1.25,flat,19,5\n", "?dry_run=true")
    problem(client.get("/v1/plugs/DRY-1/history"), 404)
