"""Database engine, sessions and the Alembic bridge.

One engine per app (created by `init_app`, never at import). A request gets one session
on first use (`session()`); it is closed when the request ends, which rolls back
anything not committed, so a failed request can never leave half a change behind.
Code outside a request (CLI, seed loader, tests) uses `unit_of_work()` the same way.
"""
from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from flask import Flask, current_app, g
from sqlalchemy import Engine, create_engine, event, text
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session, sessionmaker

from service.store.records_cache import SESSION_INFO_KEY, RecordsCache

EXTENSION_KEY = "plugfit.db"
MIGRATIONS_DIR = Path(__file__).resolve().parents[2] / "migrations"


# Seconds to wait for the database before giving up (PLUGFIT_DATABASE_TIMEOUT).
DEFAULT_TIMEOUT_S = 5


def _sqlite_tuner(timeout_s: int):
    def _tune_sqlite(dbapi_connection, _connection_record) -> None:
        """WAL lets readers run while a writer commits; SQLite leaves foreign keys off unless
        asked, per connection; the busy timeout makes a second writer wait instead of failing."""
        cursor = dbapi_connection.cursor()
        try:
            cursor.execute("PRAGMA foreign_keys=ON")
            cursor.execute(f"PRAGMA busy_timeout={int(timeout_s * 1000)}")
            cursor.execute("PRAGMA journal_mode=WAL")
        finally:
            cursor.close()

    return _tune_sqlite


def make_engine(url: str, timeout_s: int = DEFAULT_TIMEOUT_S, *, bound_statements: bool = False) -> Engine:
    """An engine for `url`; SQLite files get WAL, foreign keys and a busy timeout.

    A server database that is down, unreachable or silent must cost a request
    `timeout_s` at most, then a 503 (service.web.problems), never a hang: the connect
    timeout bounds a connection attempt to a silent host, the pool timeout the wait for a
    free connection, the lock timeout a wait on another transaction's lock, keepalives
    and the TCP user timeout a peer gone from the network, and pre-ping replaces
    connections that died while pooled (a database restart), so the service recovers by
    itself when the database is back. With `bound_statements` (the app's engines, not
    migrations, which may rightly run long) a statement may run `timeout_s` at most on
    the server, and a connection on which the database stays silent that long is given
    up (`service.store.stall_guard`)."""
    parsed = make_url(url)
    if parsed.get_backend_name() == "sqlite":
        database = parsed.database
        if database and database != ":memory:" and not database.startswith("file:"):
            Path(database).parent.mkdir(parents=True, exist_ok=True)
        engine = create_engine(url, pool_timeout=timeout_s,
                               connect_args={"check_same_thread": False, "timeout": timeout_s})
        event.listen(engine, "connect", _sqlite_tuner(timeout_s))
        return engine
    if parsed.get_backend_name() != "postgresql":
        return create_engine(url, pool_pre_ping=True, pool_timeout=timeout_s)
    engine = create_engine(url, pool_pre_ping=True, pool_timeout=timeout_s,
                           connect_args=_postgres_connect_args(timeout_s, bound_statements))
    if bound_statements:
        from service.store import stall_guard

        stall_guard.install(engine, timeout_s)
    return engine


def _postgres_connect_args(timeout_s: int, bound_statements: bool) -> dict:
    """libpq parameters: each wait on the server bounded by `timeout_s`."""
    milliseconds = int(timeout_s * 1000)
    # lock_timeout: a statement waiting on another transaction's lock gives up like
    # SQLite's busy timeout does, instead of holding the request indefinitely.
    options = f"-c lock_timeout={milliseconds}"
    if bound_statements:
        options += f" -c statement_timeout={milliseconds}"
    return {
        "connect_timeout": timeout_s,  # libpq and psycopg take 2 s at the least
        "options": options,
        # A connection whose peer has gone from the network is found out while idle
        # (keepalive probes after timeout_s, three more a third of it apart) ...
        "keepalives": 1, "keepalives_idle": timeout_s,
        "keepalives_interval": max(1, timeout_s // 3), "keepalives_count": 3,
        # ... and while sending (data unacknowledged for timeout_s closes it).
        "tcp_user_timeout": milliseconds,
    }


class Database:
    """The app's engine and session factory, kept in `app.extensions`."""

    def __init__(self, url: str, timeout_s: int = DEFAULT_TIMEOUT_S) -> None:
        self.url = url
        self.engine = make_engine(url, timeout_s, bound_statements=True)
        # What the parts counter derived from the plugs and heads
        # (service/store/records_cache.py), handed to every session of this database.
        self.records_cache = RecordsCache()
        self.sessions = sessionmaker(self.engine, expire_on_commit=False,
                                     info={SESSION_INFO_KEY: self.records_cache})

    @contextmanager
    def unit_of_work(self) -> Iterator[Session]:
        """A session that rolls back unless the block calls `commit()`."""
        with self.sessions() as session:
            yield session

    def ping(self) -> None:
        """Raise if the database cannot answer a trivial query."""
        with self.engine.connect() as connection:
            connection.execute(text("SELECT 1"))


def init_app(app: Flask) -> Database:
    database = Database(app.config["DATABASE_URL"], app.config.get("DATABASE_TIMEOUT", DEFAULT_TIMEOUT_S))
    app.extensions[EXTENSION_KEY] = database
    app.teardown_appcontext(_close_request_session)
    return database


def get_database(app: Flask | None = None) -> Database:
    return (app or current_app).extensions[EXTENSION_KEY]


def session() -> Session:
    """The current request's session, opened on first use."""
    if "db_session" not in g:
        g.db_session = get_database().sessions()
    return g.db_session


def _close_request_session(_error: BaseException | None) -> None:
    request_session = g.pop("db_session", None)
    if request_session is not None:
        request_session.close()  # rolls back whatever was not committed


@contextmanager
def unit_of_work(app: Flask | None = None) -> Iterator[Session]:
    with get_database(app).unit_of_work() as work:
        yield work


def safe_url(url: str) -> str:
    """The URL without its password, for messages and logs."""
    return make_url(url).render_as_string(hide_password=True)


def alembic_config(url: str):
    """An Alembic configuration for `url` that needs no alembic.ini on disk."""
    from alembic.config import Config

    config = Config()
    config.set_main_option("script_location", str(MIGRATIONS_DIR))
    config.attributes["database_url"] = url
    return config


def upgrade(url: str, revision: str = "head") -> None:
    from alembic import command

    command.upgrade(alembic_config(url), revision)


def downgrade(url: str, revision: str) -> None:
    from alembic import command

    command.downgrade(alembic_config(url), revision)


def current_revision(url: str) -> str | None:
    """The revision the database is at (None when never migrated)."""
    from alembic.runtime.migration import MigrationContext

    engine = make_engine(url)
    try:
        with engine.connect() as connection:
            return MigrationContext.configure(connection).get_current_revision()
    finally:
        engine.dispose()
