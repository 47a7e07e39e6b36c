"""A long build list checked half here and half in a forked helper process: the same
answer as checked in one process, whatever the helper does (dies, hangs, cannot be
started), and no helper outlives its batch. Integration tests because they start
processes; no database is involved (a list that names references is never split)."""
from __future__ import annotations

import json
import os
import time

import pytest

from service.catalog_loader import load_catalog
from service.formats.build_list import read_csv, read_json_document
from service.usecases import batch
from service.usecases.batch import run_batch

# The contract's flush fit (fit-check-contract.md, "Geometry"): 19.0 − 1.5 = 17.5 mm =
# port depth, so it passes with a 4.0 mm piston margin; a 26.5 mm reach in the same port
# stands 7.5 mm into the chamber (REACH_LONG). "abc" is no length: an invalid line.
HEADER = ("ref,plug_thread,plug_seat,plug_reach_mm,plug_gasket_thickness_mm,plug_firing_end_mm,"
          "head_thread,head_seat,head_port_depth_mm,head_piston_clearance_mm,torque,waive\n")


def _csv(lines: int) -> str:
    rows = []
    for line in range(lines):
        reach = ("19", "26.5", "abc", f"{19 + line / 10000:.4f}")[line % 4]
        waive = "REACH_LONG: demo: relieved piston" if line % 7 == 0 else ""
        clearance = 8 + (line % 13)
        rows.append(f"demo-{line},M14x1.25,flat,{reach},1.5,4,M14x1.25,flat,17.5,{clearance},{20 + line % 9},{waive}")
    return HEADER + "\n".join(rows) + "\n"


@pytest.fixture
def catalog():
    return load_catalog()


@pytest.fixture
def small_split(monkeypatch):
    """Split lists of 40 lines and more, so the tests stay quick."""
    monkeypatch.setattr(batch, "MIN_ITEMS_TO_SPLIT", 40)
    monkeypatch.setattr(batch, "helpers_available", lambda: True)
    monkeypatch.setattr(batch, "_mostly_distinct", lambda raw_items: True)


def _no_children_left() -> bool:
    """True when this process has no child, running or unreaped."""
    try:
        os.waitpid(-1, os.WNOHANG)
    except ChildProcessError:
        return True
    return False


@pytest.mark.parametrize("json_only", [False, True])
def test_a_split_list_gives_the_same_answer_as_one_checked_in_one_process(catalog, small_split, monkeypatch,
                                                                          json_only):
    forks = []
    fork = os.fork
    monkeypatch.setattr(batch.os, "fork", lambda: forks.append(1) or fork())
    checked_here = []
    check_part = batch._check_part
    monkeypatch.setattr(batch, "_check_part", lambda raw, *args: checked_here.append(len(raw)) or check_part(raw, *args))
    whole = run_batch(read_csv(_csv(101)), catalog)
    split = run_batch(read_csv(_csv(101)), catalog, split=True, json_only=json_only)
    assert forks == [1] and checked_here == [50]  # half of 101 here; the other 51 came from the helper
    assert split.summary == whole.summary
    # reach "abc" on lines 2, 6, ..., 98 of the 101: 25 invalid
    assert split.summary["invalid"] == 25 and split.summary["total"] == 101
    assert json.loads(split.to_json()) == json.loads(whole.to_json())
    if not json_only:
        assert split.as_dict() == whole.as_dict()
    assert _no_children_left()


def test_a_helper_that_dies_has_its_half_checked_here(catalog, small_split, monkeypatch):
    monkeypatch.setattr(batch, "_helper", lambda *args: os._exit(3))
    answer = run_batch(read_csv(_csv(60)), catalog, split=True)
    assert answer.as_dict() == run_batch(read_csv(_csv(60)), catalog).as_dict()
    assert _no_children_left()


def test_a_helper_that_hangs_is_killed_and_its_half_checked_here(catalog, small_split, monkeypatch):
    def hang(*args):
        time.sleep(60)
        os._exit(0)

    monkeypatch.setattr(batch, "_helper", hang)
    monkeypatch.setattr(batch, "HELPER_GRACE_S", 0.2)
    started = time.monotonic()
    answer = run_batch(read_csv(_csv(60)), catalog, split=True)
    assert time.monotonic() - started < 30
    assert answer.as_dict() == run_batch(read_csv(_csv(60)), catalog).as_dict()
    assert _no_children_left()


def test_a_helper_that_sends_garbage_has_its_half_checked_here(catalog, small_split, monkeypatch):
    def garbage(read_end, write_end, *args):
        os.write(write_end, b"not a pickle")
        os._exit(0)

    monkeypatch.setattr(batch, "_helper", garbage)
    answer = run_batch(read_csv(_csv(60)), catalog, split=True)
    assert answer.as_dict() == run_batch(read_csv(_csv(60)), catalog).as_dict()
    assert _no_children_left()


def test_when_no_process_can_be_forked_the_list_is_checked_here(catalog, small_split, monkeypatch):
    def no_fork():
        raise OSError("no more processes")

    monkeypatch.setattr(batch.os, "fork", no_fork)
    answer = run_batch(read_csv(_csv(60)), catalog, split=True)
    assert answer.as_dict() == run_batch(read_csv(_csv(60)), catalog).as_dict()


def test_a_list_that_names_a_reference_is_never_split(catalog, small_split, monkeypatch):
    forks = []
    monkeypatch.setattr(batch.os, "fork", lambda: forks.append(1) or 0)
    items = [{"plug": {"thread": "M14x1.25", "seat": "flat", "reach": 19.0}, "head": {"head_id": "DEMO-HEAD"}}]
    items += [{"plug": {"thread": "M14x1.25", "seat": "flat", "reach": 19.0},
               "head": {"thread": "M14x1.25", "seat": "flat", "port_depth": 17.5}}] * 59
    looked_up = []

    def fetch(skus, head_ids):
        looked_up.append(head_ids)
        return {}, {}

    answer = run_batch(read_json_document({"items": items}), catalog, fetch, split=True)
    assert forks == [] and looked_up == [{"DEMO-HEAD"}]
    assert answer.summary["invalid"] == 1 and answer.summary["total"] == 60


def test_a_threaded_process_forks_no_helper(monkeypatch):
    monkeypatch.setattr(batch.threading, "active_count", lambda: 2)
    assert batch.helpers_available() is False


def test_only_lists_whose_plugs_and_heads_mostly_differ_are_worth_splitting():
    def rows(plug_reach, head_depth) -> str:
        return HEADER + "".join(f"{n},M14,flat,{plug_reach(n)},1.5,4,M14,flat,{head_depth(n)},8,20,\n"
                                for n in range(3000))

    assert batch._mostly_distinct(read_csv(rows(lambda n: 19 + n / 1e4, lambda n: 17 + n / 1e4)))
    assert not batch._mostly_distinct(read_csv(rows(lambda n: 19 + n % 40 / 10, lambda n: 17.5)))
    assert not batch._mostly_distinct(read_csv(rows(lambda n: 19 + n % 100 / 10, lambda n: 17 + n % 40 / 10)))
