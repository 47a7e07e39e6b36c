"""The database down, silent, busy or back again: 503 problems (never a hang, never a
stack trace), and the service recovers by itself when the database returns.

A fit-check with the plug and head inline needs no database at all and keeps working.
"""
from __future__ import annotations

import socket
import threading
import time
from contextlib import closing

import pytest
from sqlalchemy import text
from sqlalchemy.engine import make_url

from schemas.problem import PROBLEM_MEDIA_TYPE
from service.store import db
from service.web import create_app
from tests import postgres
from tests.tcp_relay import FreezableRelay, pump

UNAVAILABLE = "tag:plugfit,2025:problem/database-unavailable"
# A whole request must come back well within this, or the test fails instead of hanging CI.
HANG_GUARD_S = 60
FLUSH_CHECK = {"plug": {"thread": "M14x1.25", "seat": "flat", "reach": 19.0, "gasket_thickness": 1.5, "firing_end": 4.0},
               "head": {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5, "piston_clearance": 8.0}}
PLUG = {"sku": "FAULT-1", "thread": "M14x1.25", "seat": "flat", "reach": 19.0}


def unused_port() -> int:
    with closing(socket.socket()) as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def answered(call):
    """Run `call()` in a thread; fail (rather than hang) if it has not returned in time."""
    outcome = {}
    worker = threading.Thread(target=lambda: outcome.setdefault("response", call()), daemon=True)
    worker.start()
    worker.join(HANG_GUARD_S)
    assert "response" in outcome, f"the request hung for {HANG_GUARD_S} s"
    return outcome["response"]


def unavailable(response) -> dict:
    assert response.status_code == 503, response.get_data(as_text=True)
    assert response.mimetype == PROBLEM_MEDIA_TYPE
    body = response.get_json(force=True)
    assert body["type"] == UNAVAILABLE
    text_sent = response.get_data(as_text=True)
    for leak in ("Traceback", "psycopg", "sqlalchemy", "127.0.0.1"):
        assert leak not in text_sent
    return body


def test_with_no_database_server_reads_and_writes_are_503_problems_and_inline_checks_still_work(api_key):
    app = create_app({"TESTING": True, "DATABASE_TIMEOUT": 2,
                      "DATABASE_URL": f"postgresql+psycopg://plugfit@127.0.0.1:{unused_port()}/plugfit"})
    client = app.test_client()
    unavailable(answered(lambda: client.get("/v1/health")))
    unavailable(answered(lambda: client.get("/v1/plugs")))
    response = unavailable(answered(lambda: client.get("/v1/plugs/FAULT-1")))
    assert response["status"] == 503
    busy = answered(lambda: client.post("/v1/plugs", json=PLUG, headers={"Authorization": f"Bearer {api_key}"}))
    unavailable(busy)
    assert busy.headers["Retry-After"] == "1"
    checked = answered(lambda: client.post("/v1/fit-checks", json=FLUSH_CHECK))
    assert checked.status_code == 200
    assert checked.get_json()["verdict"] == "pass"


def test_a_database_host_that_accepts_but_never_answers_costs_the_timeout_then_a_503():
    with closing(socket.socket()) as silent:
        silent.bind(("127.0.0.1", 0))
        silent.listen(8)  # the kernel completes the handshake; nobody ever speaks
        port = silent.getsockname()[1]
        app = create_app({"TESTING": True, "DATABASE_TIMEOUT": 1,
                          "DATABASE_URL": f"postgresql+psycopg://plugfit@127.0.0.1:{port}/plugfit"})
        unavailable(answered(lambda: app.test_client().get("/v1/plugs/FAULT-1")))


def test_a_write_that_waits_longer_than_the_timeout_for_a_lock_is_a_503_and_a_retry_succeeds(database_url, auth):
    app = create_app({"TESTING": True, "DATABASE_URL": database_url, "DATABASE_TIMEOUT": 1})
    client = app.test_client()
    holder = db.make_engine(database_url)
    try:
        with holder.connect() as connection:
            if connection.dialect.name == "sqlite":
                connection.exec_driver_sql("BEGIN IMMEDIATE")  # SQLite's one write lock
            else:
                connection.execute(text("LOCK TABLE plugs IN EXCLUSIVE MODE"))
            unavailable(answered(lambda: client.post("/v1/plugs", json=PLUG, headers=auth)))
            connection.rollback()
    finally:
        holder.dispose()
    assert client.post("/v1/plugs", json=PLUG, headers=auth).status_code == 201
    assert client.get("/v1/plugs/FAULT-1/history").get_json()[0]["action"] == "create"


class Proxy:
    """A TCP relay to the real database that can be taken down and brought back, as a
    database restart or a network cut looks to the service."""

    def __init__(self, target_host: str, target_port: int) -> None:
        self.target = (target_host, target_port)
        self.port = unused_port()
        self.listener: socket.socket | None = None
        self.sockets: list[socket.socket] = []
        self.lock = threading.Lock()

    def up(self) -> None:
        self.listener = socket.create_server(("127.0.0.1", self.port))
        threading.Thread(target=self._accept, args=(self.listener,), daemon=True).start()

    def down(self) -> None:
        """Stop listening and cut every relayed connection."""
        assert self.listener is not None
        try:
            self.listener.shutdown(socket.SHUT_RDWR)  # wakes the accept() blocked in its thread
        except OSError:
            pass
        self.listener.close()
        self.listener = None
        with self.lock:
            for sock in self.sockets:
                try:
                    sock.shutdown(socket.SHUT_RDWR)
                except OSError:
                    pass
                sock.close()
            self.sockets.clear()

    def _accept(self, listener: socket.socket) -> None:
        while True:
            try:
                client, _ = listener.accept()
            except OSError:
                return
            upstream = socket.create_connection(self.target)
            with self.lock:
                self.sockets += [client, upstream]
            for source, sink in ((client, upstream), (upstream, client)):
                threading.Thread(target=pump, args=(source, sink), daemon=True).start()


def postgres_address(database_url: str) -> tuple[str, int]:
    real = make_url(database_url)
    return real.host or "127.0.0.1", real.port or 5432


def app_through(database_url: str, relay_port: int, *, timeout_s: int):
    """An app that reaches the test's database through a relay on `relay_port`."""
    relayed = make_url(database_url).set(host="127.0.0.1", port=relay_port).render_as_string(False)
    return create_app({"TESTING": True, "DATABASE_TIMEOUT": timeout_s, "DATABASE_URL": relayed})


@pytest.mark.postgres
def test_the_service_recovers_by_itself_when_the_database_comes_back(database_url, auth):
    if postgres.server_url() is None:
        pytest.skip("needs a PostgreSQL server (PLUGFIT_TEST_POSTGRES_URL); SQLite has no server to lose")
    proxy = Proxy(*postgres_address(database_url))
    app = app_through(database_url, proxy.port, timeout_s=2)
    client = app.test_client()
    try:
        unavailable(answered(lambda: client.get("/v1/health")))           # down from the start
        proxy.up()
        assert answered(lambda: client.get("/v1/health")).status_code == 200
        assert client.post("/v1/plugs", json=PLUG, headers=auth).status_code == 201
        proxy.down()                                                        # the pooled connection dies
        unavailable(answered(lambda: client.get("/v1/plugs/FAULT-1")))
        proxy.up()                                                          # and comes back: no restart
        again = answered(lambda: client.get("/v1/plugs/FAULT-1"))
        assert again.status_code == 200
        assert again.get_json()["sku"] == "FAULT-1"
    finally:
        db.get_database(app).engine.dispose()
        if proxy.listener is not None:
            proxy.down()


# The budget of the frozen-link test: a request that waits on a silent database gets
# its 503 after one budget (a stalled statement or pre-ping, or the connect timeout),
# never after two (a timed-out ping followed by a reconnection attempt) or the
# worker's 30 s. The slack absorbs a busy machine; a second budget does not fit in it.
FROZEN_BUDGET_S = 3
FROZEN_SLACK_S = 1.5


@pytest.mark.postgres
def test_a_frozen_link_to_postgres_is_a_503_within_the_timeout_and_recovers_when_thawed(database_url, auth):
    if postgres.server_url() is None:
        pytest.skip("needs a PostgreSQL server (PLUGFIT_TEST_POSTGRES_URL)")
    relay = FreezableRelay(*postgres_address(database_url))
    app = app_through(database_url, relay.port, timeout_s=FROZEN_BUDGET_S)
    client = app.test_client()
    by_reference = {"plug": {"sku": "FAULT-1"}, "head": FLUSH_CHECK["head"]}
    try:
        assert client.post("/v1/plugs", json=PLUG, headers=auth).status_code == 201
        relay.freeze()
        requests_that_wait = [
            ("a read on the pooled connection", lambda: client.get("/v1/plugs/FAULT-1")),
            ("health, connecting afresh", lambda: client.get("/v1/health")),
            ("a list", lambda: client.get("/v1/plugs")),
            ("a write", lambda: client.put("/v1/plugs/FAULT-1", json={**PLUG, "reach": 19.5}, headers=auth)),
            ("a check by reference", lambda: client.post("/v1/fit-checks", json=by_reference)),
        ]
        for what, call in requests_that_wait:
            started = time.monotonic()
            response = answered(call)
            elapsed = time.monotonic() - started
            unavailable(response)
            assert response.headers["Retry-After"] == "1", what
            assert elapsed < FROZEN_BUDGET_S + FROZEN_SLACK_S, f"{what}: {elapsed:.1f} s"
        inline = answered(lambda: client.post("/v1/fit-checks", json=FLUSH_CHECK))
        assert inline.status_code == 200  # needs no database, so the frozen link costs it nothing
        relay.thaw()                      # no restart: the next requests simply work
        again = answered(lambda: client.get("/v1/plugs/FAULT-1"))
        assert again.status_code == 200
        assert again.get_json()["reach"]["value"] == 19.0  # the write during the freeze changed nothing
        assert client.put("/v1/plugs/FAULT-1", json={**PLUG, "reach": 19.5}, headers=auth).status_code == 200
    finally:
        db.get_database(app).engine.dispose()
        relay.stop()


@pytest.mark.postgres
def test_the_app_bounds_statements_on_the_server_and_migrations_do_not(database_url):
    if postgres.server_url() is None:
        pytest.skip("needs a PostgreSQL server (PLUGFIT_TEST_POSTGRES_URL)")
    app = create_app({"TESTING": True, "DATABASE_URL": database_url, "DATABASE_TIMEOUT": 2})
    with db.get_database(app).engine.connect() as connection:
        assert connection.execute(text("SHOW statement_timeout")).scalar() == "2s"
        assert connection.execute(text("SHOW lock_timeout")).scalar() == "2s"
        assert connection.execute(text("SELECT 1 FROM pg_sleep(0.5)")).scalar() == 1  # well within
    migrations = db.make_engine(database_url, 2)
    with migrations.connect() as connection:
        assert connection.execute(text("SHOW statement_timeout")).scalar() == "0"  # unbounded
