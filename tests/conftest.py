"""Shared fixtures: a fresh, Alembic-migrated SQLite database per test, the app on it,
its test client, a CLI runner bound to it, and an API key.

Migrating takes a few hundred milliseconds, so the suite migrates one template database
per session and each test gets a copy of that file (the copy is still produced by
Alembic, never by create_all).

With PLUGFIT_TEST_POSTGRES_URL set (see tests/postgres.py, `make test-postgres`) the same
fixtures give every test the same PostgreSQL scratch database instead, migrated once
per session and emptied before each test.
"""
from __future__ import annotations

import os
import shutil
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest
from click.testing import CliRunner, Result
from flask import Flask
from flask.testing import FlaskClient

from service.store import db
from service.web import create_app
from service.web.auth import create_key
from tests import postgres


@pytest.fixture(autouse=True)
def _no_operator_settings(monkeypatch: pytest.MonkeyPatch) -> None:
    """A developer's own PLUGFIT_* variables must not change what the tests see."""
    for name in list(os.environ):
        if name.startswith("PLUGFIT_") and not name.startswith("PLUGFIT_TEST_"):
            monkeypatch.delenv(name)


@pytest.fixture(scope="session")
def migrated_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("template") / "plugfit.db"
    db.upgrade(f"sqlite:///{path}")
    return path


@pytest.fixture(scope="session")
def postgres_database() -> Iterator[tuple[str, postgres.Emptier] | None]:
    """The session's migrated PostgreSQL scratch database, or None when running on SQLite."""
    server = postgres.server_url()
    if server is None:
        yield None
        return
    url = postgres.create_scratch_database(server)
    try:
        db.upgrade(url)
        emptier = postgres.Emptier(url, postgres.data_tables(url))
        yield url, emptier
        emptier.dispose()
    finally:
        postgres.drop_database(url)


@pytest.fixture
def database_url(request: pytest.FixtureRequest, tmp_path: Path) -> str:
    """A migrated database holding nothing: a copy of the SQLite template, or the
    PostgreSQL scratch database just emptied."""
    on_postgres = request.getfixturevalue("postgres_database")
    if on_postgres is not None:
        url, emptier = on_postgres
        emptier.empty()
        return url
    path = tmp_path / "plugfit.db"
    shutil.copyfile(request.getfixturevalue("migrated_template"), path)
    return f"sqlite:///{path}"


@pytest.fixture(scope="session")
def make_empty_database(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Callable[[], str]]:
    """Makes databases never migrated (a server process under test migrates its own):
    SQLite files, or PostgreSQL scratch databases dropped when the session ends."""
    server = postgres.server_url()
    made: list[str] = []

    def make() -> str:
        if server is None:
            return f"sqlite:///{tmp_path_factory.mktemp('database') / 'plugfit.db'}"
        made.append(postgres.create_scratch_database(server))
        return made[-1]

    yield make
    for url in made:
        postgres.drop_database(url)


@pytest.fixture
def empty_database_url(make_empty_database: Callable[[], str]) -> str:
    """A database never migrated, for tests of the migrations themselves."""
    return make_empty_database()


@pytest.fixture(autouse=True)
def _dispose_engines(monkeypatch: pytest.MonkeyPatch) -> Iterator[None]:
    """Close the connection pools of every engine a test made: an app a test builds
    itself would otherwise keep PostgreSQL connections until garbage collection."""
    made = []
    original = db.make_engine

    def tracked(*args, **kwargs):
        engine = original(*args, **kwargs)
        made.append(engine)
        return engine

    monkeypatch.setattr(db, "make_engine", tracked)
    yield
    for engine in made:
        engine.dispose()


@pytest.fixture
def app(database_url: str) -> Iterator[Flask]:
    application = create_app({"TESTING": True, "DATABASE_URL": database_url})
    yield application
    db.get_database(application).engine.dispose()


@pytest.fixture
def client(app: Flask) -> FlaskClient:
    return app.test_client()


@dataclass
class PlugfitRunner:
    """Runs `plugfit ...` in-process against the test's database."""

    database_url: str

    def invoke(self, *args: str, input: str | None = None) -> Result:
        from service.cli import main

        return CliRunner().invoke(main, list(args), input=input,
                                  env={"PLUGFIT_DATABASE_URL": self.database_url}, catch_exceptions=False)


@pytest.fixture
def runner(database_url: str) -> PlugfitRunner:
    return PlugfitRunner(database_url)


@pytest.fixture
def api_key(app: Flask) -> str:
    with db.unit_of_work(app) as session:
        new = create_key(session, "test-suite")
        session.commit()
    return new.key


@pytest.fixture
def auth(api_key: str) -> dict[str, str]:
    """Headers that authorise a write."""
    return {"Authorization": f"Bearer {api_key}"}
