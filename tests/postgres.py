"""PostgreSQL for the test suite: scratch databases on the server PLUGFIT_TEST_POSTGRES_URL names.

When PLUGFIT_TEST_POSTGRES_URL is set (e.g. `postgresql+psycopg://postgres@127.0.0.1:5432/postgres`,
a database the user may connect to and CREATE DATABASE from), the fixtures in
tests/conftest.py run every database test on PostgreSQL instead of SQLite: one scratch
database per test session, migrated by Alembic once, emptied between tests. Unset, the
suite never imports a PostgreSQL driver.

`python -m tests.postgres reachable URL` exits 0 when the server answers (the Makefile
uses it to decide whether the PostgreSQL part of `make test` runs).
"""
from __future__ import annotations

import gc
import os
import secrets
import sys
from collections.abc import Iterable

from sqlalchemy import create_engine, inspect, text
from sqlalchemy.engine import URL, make_url
from sqlalchemy.exc import OperationalError

ENVIRONMENT_VARIABLE = "PLUGFIT_TEST_POSTGRES_URL"
SCRATCH_PREFIX = "plugfit_test_"
CONNECT_TIMEOUT_S = 3


def server_url() -> str | None:
    """The PostgreSQL server the suite should use, or None for SQLite."""
    return os.environ.get(ENVIRONMENT_VARIABLE) or None


def _admin_engine(url: str):
    # CREATE/DROP DATABASE cannot run inside a transaction.
    return create_engine(url, isolation_level="AUTOCOMMIT", pool_pre_ping=False,
                         connect_args={"connect_timeout": CONNECT_TIMEOUT_S})


def reachable(url: str) -> bool:
    try:
        engine = _admin_engine(url)
        try:
            with engine.connect() as connection:
                connection.execute(text("SELECT 1"))
        finally:
            engine.dispose()
    except Exception:  # any failure to connect means "not here"; the caller says why it skips
        return False
    return True


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def create_scratch_database(url: str) -> str:
    """Create an empty database named after this process; return its URL. Scratch
    databases of test sessions that died (their pid is gone) are dropped first."""
    server = make_url(url)
    name = f"{SCRATCH_PREFIX}{os.getpid()}_{secrets.token_hex(3)}"
    engine = _admin_engine(url)
    try:
        with engine.connect() as connection:
            existing = connection.execute(
                text("SELECT datname FROM pg_database WHERE datname LIKE :prefix"),
                {"prefix": SCRATCH_PREFIX + "%"}).scalars().all()
            for stale in existing:
                pid = stale[len(SCRATCH_PREFIX):].split("_")[0]
                if pid.isdigit() and not _pid_alive(int(pid)):
                    connection.execute(text(f'DROP DATABASE IF EXISTS "{stale}" WITH (FORCE)'))
            connection.execute(text(f'CREATE DATABASE "{name}"'))
    finally:
        engine.dispose()
    return server.set(database=name).render_as_string(hide_password=False)


def drop_database(url: str) -> None:
    target = make_url(url)
    maintenance: URL = target.set(database="postgres")
    engine = _admin_engine(maintenance.render_as_string(hide_password=False))
    try:
        with engine.connect() as connection:
            connection.execute(text(f'DROP DATABASE IF EXISTS "{target.database}" WITH (FORCE)'))
    finally:
        engine.dispose()


def data_tables(url: str) -> list[str]:
    """Every table but Alembic's own, as the migrations made them."""
    engine = create_engine(url)
    try:
        return sorted(set(inspect(engine).get_table_names()) - {"alembic_version"})
    finally:
        engine.dispose()


class Emptier:
    """Empties the given tables between tests, on one kept connection (a TRUNCATE of
    every table at once takes a few milliseconds; a new database per test would take
    hundreds)."""

    def __init__(self, url: str, tables: Iterable[str]) -> None:
        self.engine = create_engine(url, pool_size=1)
        self.statement = text("TRUNCATE {} RESTART IDENTITY CASCADE".format(
            ", ".join(f'"{table}"' for table in tables)))

    def empty(self) -> None:
        try:
            self._truncate("1s")
        except OperationalError:
            # A response a test never closed (a streamed export) can keep its request's
            # transaction open until the garbage collector finalises it; collect, retry.
            gc.collect()
            self._truncate("10s")

    def _truncate(self, lock_timeout: str) -> None:
        with self.engine.begin() as connection:
            # A test that leaked an open transaction must fail the next setup, not hang it.
            connection.execute(text(f"SET LOCAL lock_timeout = '{lock_timeout}'"))
            connection.execute(self.statement)

    def dispose(self) -> None:
        self.engine.dispose()


def main(argv: list[str]) -> int:
    if len(argv) == 2 and argv[0] == "reachable":
        return 0 if reachable(argv[1]) else 1
    print("usage: python -m tests.postgres reachable URL", file=sys.stderr)
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
