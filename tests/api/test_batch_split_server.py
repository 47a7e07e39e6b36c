"""A long build list of distinct lines sent to a real `plugfit serve` with gunicorn's
sync workers (single-threaded, so the batch is split with a forked helper process): the
same answer as checked in one process, and no helper left behind by the worker."""
from __future__ import annotations

from pathlib import Path

import pytest
import requests

from service.catalog_loader import load_catalog
from service.formats.build_list import read_csv
from service.usecases import batch
from tests.live_server import running_server

pytestmark = pytest.mark.server

REPO = Path(__file__).resolve().parents[2]
# The contract's flush fit (fit-check-contract.md, "Geometry"): (19.0 − 1.5) − 17.5 = 0.0 mm
# protrusion, piston margin (17.5 + 8.0) − (17.5 + 4.0) = 4.0 mm; each line moves the
# reach and the port depth together by a few micrometres, so every line is distinct and
# stays a flush fit, and every fifth line gives a reach that is no length ("abc").
HEADER = ("ref,plug_thread,plug_seat,plug_reach_mm,plug_gasket_thickness_mm,plug_firing_end_mm,"
          "head_thread,head_seat,head_port_depth_mm,head_piston_clearance_mm\n")
LINES = 2400


def _build_list() -> str:
    rows = []
    for n in range(LINES):
        reach = "abc" if n % 5 == 4 else f"{19 + n / 1e5:.5f}"
        rows.append(f"line-{n},M14x1.25,flat,{reach},1.5,4,M14x1.25,flat,{17.5 + n / 1e5:.5f},8")
    return HEADER + "\n".join(rows) + "\n"


def _children(pid: int) -> list[int]:
    path = Path(f"/proc/{pid}/task/{pid}/children")
    return [int(child) for child in path.read_text().split()] if path.exists() else []


@pytest.fixture(scope="module")
def sync_server(tmp_path_factory, make_empty_database):
    """One sync worker, one thread: the only kind of worker a batch may split in."""
    with running_server(make_empty_database(), tmp_path_factory.mktemp("sync-server"), workers=1, threads=1) as live:
        yield live.base_url, live.process


def test_a_sync_worker_splits_a_long_distinct_list_and_answers_as_one_process_would(sync_server, monkeypatch):
    base_url, process = sync_server
    text = _build_list()
    assert LINES >= batch.MIN_ITEMS_TO_SPLIT and batch._mostly_distinct(read_csv(text))
    workers = _children(process.pid)
    assert len(workers) == 1
    helper_cpu_before = _children_cpu_ticks(workers[0])
    response = requests.post(base_url + "/v1/fit-checks/batch", data=text.encode(),
                             headers={"Content-Type": "text/csv"}, timeout=120)
    assert response.status_code == 200
    monkeypatch.setattr(batch, "helpers_available", lambda: False)
    in_one = batch.run_batch(read_csv(text), load_catalog())
    assert response.json() == in_one.as_dict()
    assert response.json()["summary"] == {"total": 2400, "pass": 1920, "warn": 0, "fail": 0, "invalid": 480,
                                          "verdict": "fail"}
    assert _children_cpu_ticks(workers[0]) > helper_cpu_before  # a helper did part of the work
    assert _children(workers[0]) == []  # and was reaped before the answer went out


def _children_cpu_ticks(pid: int) -> int:
    """User + system clock ticks of the reaped children of `pid` (proc(5): cutime, cstime)."""
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return int(fields[13]) + int(fields[14])
