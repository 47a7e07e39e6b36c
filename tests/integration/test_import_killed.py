"""An import killed with SIGKILL in the middle of writing leaves the old data intact.

A real `plugfit import plugs FILE --mode replace` process is started on a table of old
plugs; the file names none of them, so the import first deletes them all, then writes
the new ones, all in one transaction. The test waits until the process holds the
database's write lock (it is writing), lets it run on for a moment, kills it with
SIGKILL (no cleanup, no rollback by the process) and checks that every old plug, with
its history, is still there, that nothing of the new file is, and that the database
takes the same import afterwards.
"""
from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest
from sqlalchemy import create_engine, func, select, text
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session
from sqlalchemy.pool import NullPool

from service.store import db
from service.store.models import ChangeRecord, Plug

REPO = Path(__file__).resolve().parents[2]
HEADER = "sku,thread,seat,reach_mm,firing_end_mm,hex_mm,quantity_on_hand,location\n"
OLD_PLUGS = 300
NEW_PLUGS = 30_000
DEADLINE_S = 300


def csv_file(path: Path, prefix: str, count: int, quantity: int) -> Path:
    path.write_text(HEADER + "".join(f"{prefix}-{n:06d},M14x1.25,flat,19,3,16,{quantity},bin {n % 40}\n"
                                     for n in range(count)))
    return path


def writing_now(url: str) -> bool:
    """Whether another connection holds the write lock on the plugs (is mid-import)."""
    parsed = make_url(url)
    if parsed.get_backend_name() == "sqlite":
        probe = sqlite3.connect(parsed.database, timeout=0, isolation_level=None)
        try:
            probe.execute("BEGIN IMMEDIATE")
        except sqlite3.OperationalError:  # "database is locked": a writer is in its transaction
            return True
        finally:
            probe.close()  # closing rolls the probe's own empty transaction back
        return False
    engine = create_engine(url, poolclass=NullPool)
    try:
        with engine.connect() as connection:
            return bool(connection.execute(text(
                "SELECT count(*) FROM pg_locks l JOIN pg_class c ON c.oid = l.relation "
                "WHERE c.relname = 'plugs' AND l.mode = 'RowExclusiveLock' AND l.pid <> pg_backend_pid()"
            )).scalar())
    finally:
        engine.dispose()


def start_import(path: Path, url: str) -> subprocess.Popen:
    env = {key: value for key, value in os.environ.items() if not key.startswith("PLUGFIT_")}
    env["PLUGFIT_DATABASE_URL"] = url
    return subprocess.Popen([sys.executable, "-m", "service.cli", "import", "plugs", str(path), "--mode", "replace"],
                            cwd=REPO, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE)


class _session:
    """A short-lived session on `url` (the test's own, not the app's)."""

    def __init__(self, url: str) -> None:
        self.engine = db.make_engine(url)

    def __enter__(self) -> Session:
        self.session = Session(self.engine)
        return self.session

    def __exit__(self, *exc) -> None:
        self.session.close()
        self.engine.dispose()


def table_state(url: str) -> tuple[dict[str, int], int]:
    with _session(url) as session:
        stock = {sku: quantity for sku, quantity in session.execute(select(Plug.sku, Plug.quantity_on_hand))}
        entries = session.scalar(select(func.count()).select_from(ChangeRecord)) or 0
    return stock, entries


@pytest.mark.parametrize("runs_on_s", [0.0, 0.4], ids=["killed-at-once", "killed-later"])
def test_an_import_killed_midway_leaves_the_old_data_intact(runner, database_url, tmp_path, runs_on_s):
    old_file = csv_file(tmp_path / "old.csv", "OLD", OLD_PLUGS, quantity=7)
    result = runner.invoke("import", "plugs", str(old_file))
    assert result.exit_code == 0, result.output
    before = table_state(database_url)
    assert before == ({f"OLD-{n:06d}": 7 for n in range(OLD_PLUGS)}, OLD_PLUGS)

    new_file = csv_file(tmp_path / "new.csv", "NEW", NEW_PLUGS, quantity=1)
    process = start_import(new_file, database_url)
    try:
        deadline = time.monotonic() + DEADLINE_S
        while not writing_now(database_url):
            if process.poll() is not None:
                pytest.fail(f"the import ended (status {process.returncode}) before it was seen writing: "
                            f"{process.stderr.read().decode()[-2000:]}")
            assert time.monotonic() < deadline, "the import never started writing"
            time.sleep(0.005)
        time.sleep(runs_on_s)
        assert process.poll() is None, "the import finished before it could be killed; make the file bigger"
        os.kill(process.pid, signal.SIGKILL)
        assert process.wait(timeout=60) == -signal.SIGKILL
    finally:
        if process.poll() is None:
            process.kill()
            process.wait()

    assert table_state(database_url) == before
    if make_url(database_url).get_backend_name() == "sqlite":
        with sqlite3.connect(make_url(database_url).database) as check:
            assert check.execute("PRAGMA integrity_check").fetchone() == ("ok",)

    # The database is not left locked or damaged: the same import now runs to the end.
    completed = start_import(new_file, database_url)
    _, errors = completed.communicate(timeout=DEADLINE_S)
    assert completed.returncode == 0, errors.decode()[-2000:]
    stock, entries = table_state(database_url)
    assert len(stock) == NEW_PLUGS and all(sku.startswith("NEW-") for sku in stock)
    assert entries == OLD_PLUGS + OLD_PLUGS + NEW_PLUGS  # old creates, their deletes, the new creates
