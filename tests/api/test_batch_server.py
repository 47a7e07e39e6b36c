"""A long build list of distinct lines sent to a real `plugfit serve` with one gunicorn
sync worker (one process, one thread): the worker answers it by itself, with no child
process at any moment, and the answer is the one the use case gives in this process."""
from __future__ import annotations

import threading
import time
from pathlib import Path

import pytest
import requests

from service.catalog_loader import load_catalog
from service.formats.build_list import read_csv
from service.usecases.batch import run_batch
from tests.live_server import running_server

pytestmark = pytest.mark.server

# The contract's flush fit (fit-check-contract.md, "Geometry"): (19.0 − 1.5) − 17.5 = 0.0 mm
# protrusion, piston margin (17.5 + 8.0) − (17.5 + 4.0) = 4.0 mm; each line moves the
# reach and the port depth together by ten micrometres, so every line is distinct and
# stays a flush fit, and every fifth line gives a reach that is no length ("abc").
HEADER = ("ref,plug_thread,plug_seat,plug_reach_mm,plug_gasket_thickness_mm,plug_firing_end_mm,"
          "head_thread,head_seat,head_port_depth_mm,head_piston_clearance_mm\n")
LINES = 5000


def _build_list() -> str:
    rows = []
    for n in range(LINES):
        reach = "abc" if n % 5 == 4 else f"{19 + n / 1e5:.5f}"
        rows.append(f"line-{n},M14x1.25,flat,{reach},1.5,4,M14x1.25,flat,{17.5 + n / 1e5:.5f},8")
    return HEADER + "\n".join(rows) + "\n"


def _children(pid: int) -> list[int]:
    """The children of every thread of `pid` (proc(5): /proc/PID/task/TID/children)."""
    children = []
    for task in Path(f"/proc/{pid}/task").iterdir():
        path = task / "children"
        if path.exists():
            children += [int(child) for child in path.read_text().split()]
    return children


def _children_cpu_ticks(pid: int) -> int:
    """User + system clock ticks of the reaped children of `pid` (proc(5): cutime, cstime)."""
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return int(fields[13]) + int(fields[14])


@pytest.fixture(scope="module")
def sync_server(tmp_path_factory, make_empty_database):
    with running_server(make_empty_database(), tmp_path_factory.mktemp("sync-server"), workers=1, threads=1) as live:
        yield live.base_url, live.process


def test_a_sync_worker_answers_a_long_distinct_list_by_itself_with_no_child_process(sync_server):
    base_url, server = sync_server
    if not Path("/proc/self/task").exists():
        pytest.skip("needs /proc to watch the worker's children")
    text = _build_list()
    (worker,) = _children(server.pid)
    ticks_before = _children_cpu_ticks(worker)
    seen: set[int] = set()
    answered = threading.Event()

    def watch() -> None:  # a forked helper would live for a good part of a second
        while not answered.is_set():
            seen.update(_children(worker))
            time.sleep(0.002)

    watcher = threading.Thread(target=watch)
    watcher.start()
    try:
        response = requests.post(base_url + "/v1/fit-checks/batch", data=text.encode(),
                                 headers={"Content-Type": "text/csv"}, timeout=120)
    finally:
        answered.set()
        watcher.join()
    assert response.status_code == 200, response.text[:500]
    assert seen == set()
    assert _children_cpu_ticks(worker) == ticks_before  # and none came and went between two looks
    assert _children(server.pid) == [worker]  # the same worker, still alone
    answer = response.json()
    assert answer["summary"] == {"total": 5000, "pass": 4000, "warn": 0, "fail": 0, "invalid": 1000,
                                 "verdict": "fail"}
    last = answer["results"][-2]  # line-4998: reach 19.04998 mm, port depth 17.54998 mm
    assert last["ref"] == "line-4998" and last["line"] == 5000
    assert last["geometry"]["protrusion_short_side"]["nominal"] == pytest.approx(0.0, abs=1e-4)
    assert last["geometry"]["piston_margin"]["nominal"] == pytest.approx(4.0)
    assert answer["results"][-1]["verdict"] == "invalid" and list(answer["results"][-1]["errors"]) == ["plug_reach_mm"]
    assert answer == run_batch(read_csv(text), load_catalog()).as_dict()
