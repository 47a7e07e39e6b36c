"""Issue 12's reproductions, each as an HTTP request (on SQLite, and again on PostgreSQL
in `make test-postgres`): none may hang, crash or poison the service.

The stalled database is tests/api/test_database_faults.py; the seeded run of thousands
of malformed requests is tests/api/test_malformed_requests.py.
"""
from __future__ import annotations

import json
import time

import pytest
import requests

from schemas.problem import PROBLEM_MEDIA_TYPE
from service.store import db
from tests.live_server import running_server

# Issue 12, defect 1: each held a worker for seconds or ended in an uncaught OverflowError.
DENIAL_OF_SERVICE = ["9**9**8 mm", "9**9**7 mm", "(19 mm)**1000", "10**10000 mm", "2**2**20 mm"]
ACCEPTED_FORMS = "such as 19, '19 mm', '0.75 in', '3/4 in' or '1 1/4 in'"
# Issue 12, defect 2: 5,001 digits, past Python's 4,300-digit conversion limit.
HUGE = "1" + "0" * 5000
TOO_LARGE = "must be a finite number, not NaN, infinity or a number too large to hold (above 1e308)"
PLUG = {"sku": "HOSTILE-1", "thread": "M14x1.25", "seat": "flat", "reach": 19.0}
HEAD = {"head_id": "HOSTILE-H", "thread": "M14x1.25", "seat": "flat", "port_depth": 17.5}
# A refusal costs microseconds; this bound only tells a refusal from a worker held for
# seconds (the 9**9**8 reproduction took 31 s), so a busy machine cannot fail it.
REFUSED_WELL_WITHIN_S = 0.5


def problem(response, status: int) -> dict:
    assert response.status_code == status, response.get_data(as_text=True)[:500]
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    return response.get_json(force=True)


def timed(call):
    started = time.monotonic()
    response = call()
    return response, time.monotonic() - started


@pytest.mark.parametrize("text", DENIAL_OF_SERVICE)
def test_a_unit_expression_is_a_422_naming_the_field_in_milliseconds(client, text):
    response, elapsed = timed(lambda: client.post("/v1/fit-checks", json={
        "plug": {"thread": "M14", "seat": "flat", "reach": text}, "head": {"thread": "M14", "seat": "flat"}}))
    errors = problem(response, 422)["errors"]
    assert errors == {"plug": {"reach": [(f"cannot read {text!r} as a length; write a number or a number and a "
                                         f"unit, {ACCEPTED_FORMS}")]}}
    assert elapsed < REFUSED_WELL_WITHIN_S


def test_a_quantity_text_over_64_characters_has_its_own_message(client):
    text = "19" + " " * 70 + "mm"
    errors = problem(client.post("/v1/fit-checks", json={
        "plug": {"thread": "M14", "seat": "flat", "reach": 19, "firing_end": text},
        "head": {"thread": "M14", "seat": "flat"}}), 422)["errors"]
    assert errors["plug"]["firing_end"][0].startswith("a length written as text may be at most 64 characters long")


def test_every_place_a_unit_string_is_read_refuses_an_expression_by_name(client, auth):
    text = "9**9**8 mm"
    stored = problem(client.post("/v1/plugs", json={**PLUG, "gasket_thickness": text}, headers=auth), 422)
    assert list(stored["errors"]) == ["gasket_thickness"]
    as_object = problem(client.post("/v1/heads", json={**HEAD, "port_depth": {"value": 17.5, "unit": text}},
                                    headers=auth), 422)
    assert list(as_object["errors"]) == ["port_depth"]
    torque = problem(client.post("/v1/fit-checks", json={
        "plug": PLUG, "head": HEAD, "options": {"torque": "9**9**8 ft-lb"}}), 422)
    assert list(torque["errors"]["options"]) == ["torque"]
    in_query = problem(client.get("/v1/heads/ANY/fitting-plugs", query_string={"min_clearance": text}), 422)
    assert list(in_query["errors"]) == ["min_clearance"]
    # a batch CSV cell: that item is invalid, naming its column; the others are checked
    batch = client.post("/v1/fit-checks/batch", content_type="text/csv", data=(
        "ref,plug_thread,plug_seat,plug_reach,head_thread,head_seat,head_port_depth_mm\n"
        f"bad,M14,flat,{text},M14,flat,17.5\ngood,M14,flat,19 mm,M14,flat,17.5\n"))
    bad, good = batch.get_json()["results"]
    assert bad["verdict"] == "invalid" and list(bad["errors"]) == ["plug_reach"]
    assert good["verdict"] != "invalid"
    # an inventory import: a 422 naming line and column, nothing written
    imported = problem(client.post("/v1/imports/plugs", headers={**auth, "Content-Type": "text/csv"},
                                   data=f"sku,thread,seat,reach_mm\nHOSTILE-2,M14x1.25,flat,{text}\n"), 422)
    assert list(imported["errors"]) == ["2"] and list(imported["errors"]["2"]) == ["reach_mm"]
    assert client.get("/v1/plugs/HOSTILE-2").status_code == 404


@pytest.mark.parametrize("text", [" " * 100_000 + "x", "1" + " " * 100_000 + "bar gauge"])
def test_a_long_pressure_text_is_refused_by_the_cap_before_any_pattern_runs(client, text):
    """The gauge/absolute marker's pattern took 8 s on 1,000 spaces (time growing with the
    cube of the length); the 64-character cap now comes first."""
    response, elapsed = timed(lambda: client.post("/v1/fit-checks", json={
        "plug": {"thread": "M14", "seat": "flat", "reach": 19},
        "head": {"thread": "M14", "seat": "flat", "intake_pressure": text}}))
    errors = problem(response, 422)["errors"]
    assert errors["head"]["intake_pressure"][0].startswith("a pressure written as text may be at most 64 characters")
    assert elapsed < REFUSED_WELL_WITHIN_S


def test_long_runs_of_spaces_never_reach_a_backtracking_pattern(client):
    """A thread of 20,000 spaces cost 1.4 s (the designation pattern), a batch cell of
    1,000 spaces and a ± 2.2 s (the tolerance pattern); both grow faster than the text."""
    spaces = " " * 100_000
    thread, elapsed = timed(lambda: client.post("/v1/fit-checks", json={
        "plug": {"thread": "M14" + spaces + "y", "seat": "flat"}, "head": {"thread": "M14", "seat": "flat"}}))
    assert problem(thread, 422)["errors"]["plug"]["thread"] == [
        "a thread designation has at most 32 characters, such as M14x1.25"]
    assert elapsed < REFUSED_WELL_WITHIN_S
    cell, elapsed = timed(lambda: client.post("/v1/fit-checks/batch", content_type="text/csv", data=(
        "plug_thread,plug_seat,plug_reach,head_thread,head_seat\n"
        f"M14,flat,1{spaces}± x,M14,flat\n")))
    (item,) = cell.get_json()["results"]
    assert item["verdict"] == "invalid" and list(item["errors"]) == ["plug_reach"]
    assert elapsed < REFUSED_WELL_WITHIN_S


def test_the_command_line_refuses_an_expression_naming_the_option(runner):
    result = runner.invoke("check", "--plug-thread", "M14", "--plug-seat", "flat", "--plug-reach", "9**9**8 mm",
                           "--head-thread", "M14", "--head-seat", "flat")
    assert result.exit_code == 2
    assert "--plug-reach: cannot read '9**9**8 mm' as a length" in result.output


def test_a_mixed_number_reads_as_the_trade_means_it(client):
    # 1 1/4 in = 31.75 mm (NIST SP 811, 2008, B.8: 1 in = 25.4 mm); pint alone read it as 1/4 in.
    response = client.post("/v1/fit-checks", json={
        "plug": {"thread": "M14", "seat": "flat", "reach": 19, "terminal_height": "1 1/4 in"},
        "head": {"thread": "M14", "seat": "flat", "boot_range": {"min": "1 1/8 in", "max": "1 3/8 in"}}})
    assert response.status_code == 200, response.get_data(as_text=True)


@pytest.mark.parametrize(("path", "body", "where"), [
    ("/v1/fit-checks", ('{"plug": {"thread": "M14", "seat": "flat", "reach": %s}, "head": {"thread": "M14", '
                       '"seat": "flat"}}'), ["plug", "reach"]),
    ("/v1/fit-checks/diagram", ('{"plug": {"thread": "M14", "seat": "flat", "reach": 19}, "head": {"thread": "M14", '
                               '"seat": "flat", "port_depth": %s}}'), ["head", "port_depth"]),
    ("/v1/plugs", '{"sku": "HOSTILE-3", "thread": "M14", "seat": "flat", "reach": 19, "hex": %s}', ["hex"]),
    ("/v1/heads", '{"head_id": "HOSTILE-4", "thread": "M14", "seat": "flat", "compression_ratio": %s}',
     ["compression_ratio"]),
    ("/v1/plugs", '{"sku": "HOSTILE-5", "thread": "M14", "seat": "flat", "quantity_on_hand": %s}',
     ["quantity_on_hand"]),
])
def test_a_number_of_thousands_of_digits_is_a_422_naming_the_field(client, auth, path, body, where):
    response = client.post(path, data=body % HUGE, content_type="application/json", headers=auth)
    errors = problem(response, 422)["errors"]
    for key in where:
        errors = errors[key]
    assert errors  # the field is named, with its own message


def test_a_number_of_thousands_of_digits_replacing_a_plug_is_a_422_and_changes_nothing(client, auth):
    assert client.post("/v1/plugs", json=PLUG, headers=auth).status_code == 201
    body = json.dumps({**PLUG, "reach": 0}).replace('"reach": 0', f'"reach": {HUGE}')
    errors = problem(client.put("/v1/plugs/HOSTILE-1", data=body, content_type="application/json",
                                headers=auth), 422)["errors"]
    assert errors == {"reach": [TOO_LARGE]}
    assert client.get("/v1/plugs/HOSTILE-1").get_json()["reach"]["value"] == 19.0


def test_a_number_of_thousands_of_digits_in_json_lines_is_a_422_naming_line_and_field(client, auth):
    line = json.dumps({**PLUG, "reach": 0}).replace('"reach": 0', f'"reach": {HUGE}')
    errors = problem(client.post("/v1/imports/plugs", data=line + "\n",
                                 headers={**auth, "Content-Type": "application/x-ndjson"}), 422)["errors"]
    assert errors == {"1": {"reach": [TOO_LARGE]}}


def test_a_page_number_of_thousands_of_digits_is_a_422(client):
    assert list(problem(client.get("/v1/plugs", query_string={"page": HUGE}), 422)["errors"]) == ["page"]
    assert list(problem(client.get("/v1/plugs", query_string={"page_size": HUGE}), 422)["errors"]) == ["page_size"]
    assert problem(client.get("/v1/plugs", query_string={"page": "\u00b2"}), 422)  # a digit, but not ASCII


def test_a_json_body_after_a_byte_order_mark_is_read(client, auth):
    body = "\ufeff" + json.dumps({"plug": {"thread": "M14", "seat": "flat", "reach": 19},
                                  "head": {"thread": "M14", "seat": "flat", "port_depth": 17.5}})
    checked = client.post("/v1/fit-checks", data=body.encode(), content_type="application/json")
    assert checked.status_code == 200
    created = client.post("/v1/plugs", data=("\ufeff" + json.dumps(PLUG)).encode(),
                          content_type="application/json", headers=auth)
    assert created.status_code == 201
    batch = client.post("/v1/fit-checks/batch", content_type="application/json",
                        data=("\ufeff" + json.dumps({"items": [json.loads(body[1:])]})).encode())
    assert batch.status_code == 200


def test_text_with_a_nul_character_is_refused_before_the_database_on_both(client, auth):
    """PostgreSQL cannot hold NUL in text (psycopg refused the parameter: a 500); SQLite
    would store it. Refused alike on both, naming where it was."""
    message = ["holds a NUL character (U+0000), which cannot be stored; remove it"]
    problem(client.get("/v1/plugs/%00"), 404)
    problem(client.get("/v1/heads/a%00b/fitting-plugs"), 404)
    assert problem(client.get("/v1/heads", query_string={"q": "a\x00"}), 422)["errors"] == {"q": message}
    stored = client.post("/v1/plugs", json={**PLUG, "description": "a\u0000b", "heat_range": {"scale": "x\u0000",
                                                                                                "value": 5}},
                         headers=auth)
    assert problem(stored, 422)["errors"] == {"description": message, "heat_range": {"scale": message}}
    imported = client.post("/v1/imports/plugs", headers={**auth, "Content-Type": "text/csv"},
                           data="sku,thread,seat,reach_mm,description\nN-2,M14x1.25,flat,19,a\x00b\n")
    assert problem(imported, 422)["errors"] == {"line 2": message}
    assert client.get("/v1/plugs/HOSTILE-1").status_code == 404 and client.get("/v1/plugs/N-2").status_code == 404


def test_merged_slashes_are_a_404_problem_not_a_redirect(client):
    # (a path starting with // is a host to the test client; the real-server test below sends one)
    for path in ("/v1//plugs", "/v1/plugs//HOSTILE-1", "/v1///health"):
        problem(client.get(path), 404)


def test_exports_return_their_database_connection(app, client, auth):
    """Each export used to leave a connection checked out (rows read after teardown);
    with the pool exhausted every request waited 30 s."""
    client.post("/v1/plugs", json=PLUG, headers=auth)
    for _ in range(20):
        for resource in ("plugs", "heads"):
            response = client.get(f"/v1/exports/{resource}")
            assert response.status_code == 200
            response.get_data()
            response.close()
    assert db.get_database(app).engine.pool.checkedout() == 0
    assert client.get("/v1/plugs/HOSTILE-1").status_code == 200


# --- through gunicorn: what the HTTP server reads before the application --------------


@pytest.fixture(scope="module")
def server(tmp_path_factory, make_empty_database):
    with running_server(make_empty_database(), tmp_path_factory.mktemp("hostile")) as live:
        yield live


@pytest.mark.server
def test_the_longest_request_within_plugfit_limits_reaches_the_application(server):
    # q: at most 200 characters (schemas/inventory.py); four-byte characters percent-encode
    # to 12 bytes each, a request line of about 2.5 KiB.
    response = requests.get(server.base_url + "/v1/heads", params={"q": "\U0001f527" * 200}, timeout=30)
    assert response.status_code == 200
    over_ours = requests.get(server.base_url + "/v1/heads", params={"q": "x" * 5000}, timeout=30)
    assert over_ours.status_code == 422 and over_ours.headers["Content-Type"].startswith(PROBLEM_MEDIA_TYPE)


@pytest.mark.server
def test_a_request_line_over_8190_bytes_is_the_http_servers_own_400(server):
    """docs/operations.md lists this among the answers gunicorn gives itself (HTML)."""
    response = requests.get(server.base_url + "/v1/heads", params={"q": "x" * 8200}, timeout=30)
    assert response.status_code == 400


@pytest.mark.server
def test_through_gunicorn_slashes_and_bad_chunks_are_problems(server):
    merged = requests.get(server.base_url + "//v1//plugs", timeout=30, allow_redirects=False)
    assert merged.status_code == 404 and merged.headers["Content-Type"].startswith(PROBLEM_MEDIA_TYPE)

    def bad_chunks():
        yield b"zz\r\n"  # requests frames each piece as a chunk; this one's size line is not hex

    broken = requests.post(server.base_url + "/v1/fit-checks", data=bad_chunks(), timeout=30,
                           headers={"Content-Type": "application/json"})
    assert broken.status_code == 400 and broken.headers["Content-Type"].startswith(PROBLEM_MEDIA_TYPE)


@pytest.mark.server
def test_the_denial_of_service_string_costs_the_server_nothing(server):
    body = {"plug": {"thread": "M14", "seat": "flat", "reach": "9**9**8 mm"}, "head": {"thread": "M14", "seat": "flat"}}
    for _ in range(10):  # three used to stop a default server
        response = requests.post(server.base_url + "/v1/fit-checks", json=body, timeout=30)
        assert response.status_code == 422
    assert requests.get(server.base_url + "/v1/health", timeout=30).status_code == 200
