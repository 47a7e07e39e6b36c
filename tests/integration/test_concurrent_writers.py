"""Many writers at once, as several server processes with several threads each would be:
no write may be lost or half-done (a record without its history entry, or the reverse).

SQLite serialises writers; WAL and the busy timeout (service/store/db.py) make a second writer
wait its turn instead of failing. PostgreSQL (PLUGFIT_TEST_POSTGRES_URL) runs the same
tests. Each process builds its own app after the fork, as gunicorn's workers do.
"""
from __future__ import annotations

import multiprocessing
import threading
from collections import Counter

import pytest
from sqlalchemy import func, select

from service.store import db
from service.store.models import ChangeRecord, Plug
from service.web import create_app

PROCESSES = 4
THREADS = 4
PLUGS_PER_THREAD = 15
INCREMENTS_PER_THREAD = 6
# A writer told 409/412 (someone was faster) reads again and retries, as a client should.
# 503 (database busy) is not among them: the busy timeout must make writers wait instead.
RETRYABLE = {409, 412}
MAX_ATTEMPTS = 200

PLUG = {"thread": "M14x1.25", "seat": "flat", "reach": 19.0, "gasket_thickness": 1.5, "firing_end": 4.0}


def _in_threads(database_url: str, work, results: multiprocessing.Queue) -> None:
    """One writer process: its own app, THREADS threads each running `work(client, n)`."""
    app = create_app({"TESTING": True, "DATABASE_URL": database_url})
    statuses: Counter = Counter()
    lock = threading.Lock()

    def run(thread_number: int) -> None:
        seen = work(app.test_client(), thread_number)
        with lock:
            statuses.update(seen)

    threads = [threading.Thread(target=run, args=(n,)) for n in range(THREADS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    db.get_database(app).engine.dispose()
    results.put(dict(statuses))


def _run_writers(database_url: str, make_work) -> Counter:
    context = multiprocessing.get_context("fork")  # children build their own app and engine
    results = context.Queue()
    processes = [context.Process(target=_in_threads, args=(database_url, make_work(p), results))
                 for p in range(PROCESSES)]
    for process in processes:
        process.start()
    statuses: Counter = Counter()
    for _ in processes:
        statuses.update(results.get(timeout=120))
    for process in processes:
        process.join(timeout=30)
        assert process.exitcode == 0
    return statuses


class CreatePlugs:
    def __init__(self, process: int, headers: dict[str, str]) -> None:
        self.process, self.headers = process, headers

    def __call__(self, client, thread: int) -> Counter:
        seen: Counter = Counter()
        for number in range(PLUGS_PER_THREAD):
            sku = f"CW-{self.process}-{thread}-{number}"
            for _ in range(MAX_ATTEMPTS):
                status = client.post("/v1/plugs", json={**PLUG, "sku": sku}, headers=self.headers).status_code
                seen[status] += 1
                if status not in RETRYABLE:
                    break
        return seen


class IncrementStock:
    """Read-modify-write of one plug's stock with If-Match, retried until it lands."""

    def __init__(self, headers: dict[str, str]) -> None:
        self.headers = headers

    def __call__(self, client, thread: int) -> Counter:
        seen: Counter = Counter()
        for _ in range(INCREMENTS_PER_THREAD):
            for _ in range(MAX_ATTEMPTS):
                got = client.get("/v1/plugs/SHARED-1")
                if got.status_code != 200:
                    seen[got.status_code] += 1
                    continue
                body = got.get_json()
                status = client.put("/v1/plugs/SHARED-1",
                                    json={**body, "quantity_on_hand": body["quantity_on_hand"] + 1},
                                    headers={**self.headers, "If-Match": got.headers["ETag"]}).status_code
                seen[status] += 1
                if status not in RETRYABLE:
                    break
        return seen


def test_concurrent_creates_from_several_processes_lose_no_record_and_no_history_entry(app, database_url, auth):
    statuses = _run_writers(database_url, lambda process: CreatePlugs(process, auth))
    expected = PROCESSES * THREADS * PLUGS_PER_THREAD
    assert statuses[201] == expected
    assert set(statuses) <= {201} | RETRYABLE
    with db.unit_of_work(app) as session:
        assert session.scalar(select(func.count()).select_from(Plug)) == expected
        assert session.scalar(select(func.count()).select_from(ChangeRecord)) == expected
        # every record has exactly its own entry: nothing half-done
        assert set(session.scalars(select(Plug.sku))) == set(session.scalars(select(ChangeRecord.identifier)))


def test_concurrent_read_modify_writes_with_if_match_lose_no_increment(app, client, database_url, auth):
    assert client.post("/v1/plugs", json={**PLUG, "sku": "SHARED-1", "quantity_on_hand": 0},
                       headers=auth).status_code == 201
    statuses = _run_writers(database_url, lambda process: IncrementStock(auth))
    increments = PROCESSES * THREADS * INCREMENTS_PER_THREAD
    assert statuses[200] == increments
    assert set(statuses) <= {200} | RETRYABLE
    assert client.get("/v1/plugs/SHARED-1").get_json()["quantity_on_hand"] == increments
    entries = client.get("/v1/plugs/SHARED-1/history",
                         query_string={"order": "oldest_first", "page_size": 1000}).get_json()
    # One unbroken chain of versions: every write saw the one before it.
    assert [(e["version_before"], e["version_after"]) for e in entries[1:]] == \
        [(v, v + 1) for v in range(1, increments + 1)]
    assert [e["after"]["quantity_on_hand"] for e in entries] == list(range(increments + 1))


@pytest.fixture(autouse=True)
def _writers_need_fork():
    if "fork" not in multiprocessing.get_all_start_methods():
        pytest.skip("needs fork() to start writer processes cheaply")
