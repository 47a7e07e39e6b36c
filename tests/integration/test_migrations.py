"""Alembic migrations on SQLite (and PostgreSQL under PLUGFIT_TEST_POSTGRES_URL): empty →
head → empty, and the models match head."""
from __future__ import annotations

from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import inspect, text

from service.store import db
from service.store.models import Base


def _insert_head(connection, head_id: str) -> None:
    """A bare M14 flat-seat head written with plain SQL (no model: the schema under test
    may be an older revision's)."""
    connection.execute(text("INSERT INTO heads (head_id, thread, nonstandard_thread, seat, version, created_at, "
                            "updated_at) VALUES (:head_id, 'M14x1.25', false, 'flat', 1, CURRENT_TIMESTAMP, "
                            "CURRENT_TIMESTAMP)"), {"head_id": head_id})


def head_revision() -> str:
    return ScriptDirectory.from_config(db.alembic_config("sqlite://")).get_current_head()


def tables(url: str) -> set[str]:
    engine = db.make_engine(url)
    try:
        return set(inspect(engine).get_table_names())
    finally:
        engine.dispose()


def test_upgrade_from_empty_to_head_then_downgrade_back_to_empty(empty_database_url):
    url = empty_database_url  # SQLite, or PostgreSQL under PLUGFIT_TEST_POSTGRES_URL
    assert db.current_revision(url) is None
    db.upgrade(url)
    assert db.current_revision(url) == head_revision()
    assert {"plugs", "heads", "api_keys"} <= tables(url)
    db.downgrade(url, "base")
    assert db.current_revision(url) is None
    assert tables(url) <= {"alembic_version"}
    db.upgrade(url)  # and up again: the downgrade left nothing in the way
    assert db.current_revision(url) == head_revision()


def test_the_models_match_the_newest_migration(database_url):
    engine = db.make_engine(database_url)
    try:
        with engine.connect() as connection:
            context = MigrationContext.configure(connection, opts={"compare_type": True})
            assert compare_metadata(context, Base.metadata) == []
    finally:
        engine.dispose()


def test_the_heads_generation_triggers_survive_a_downgrade_below_the_boost_columns(empty_database_url):
    """Migration 0005 adds columns to heads. On SQLite a batch drop of them would copy the
    table and lose 0004's generation triggers, so after a downgrade to 0004 the parts
    counter would serve stale heads (and 0004's own downgrade would fail)."""
    url = empty_database_url
    db.upgrade(url)
    db.downgrade(url, "0004")
    engine = db.make_engine(url)
    try:
        with engine.begin() as connection:
            generation = "SELECT generation FROM table_generations WHERE name = 'heads'"
            before = connection.execute(text(generation)).scalar()
            _insert_head(connection, "H-TRIGGER")
            after = connection.execute(text(generation)).scalar()
    finally:
        engine.dispose()
    assert after > before


GENERATION = text("SELECT generation FROM table_generations WHERE name = 'heads'")



def test_a_head_written_at_head_revision_still_raises_the_heads_generation(database_url):
    """The triggers of migration 0004 must survive every later migration of `heads` (a
    SQLite batch rebuild of the table would drop them, and the counter's cache would never
    hear of a changed head)."""
    engine = db.make_engine(database_url)
    try:
        with engine.begin() as connection:
            before = connection.execute(GENERATION).scalar() or 0  # the row may have been emptied
            _insert_head(connection, "T-GEN")
            after = connection.execute(GENERATION).scalar() or 0
    finally:
        engine.dispose()
    assert after > before


def test_a_heads_running_data_changed_at_head_revision_raises_the_heads_generation(database_url):
    """Migration 0007 adds the running-clearance columns with plain ALTER TABLE: an UPDATE
    of one of them still reaches 0004's triggers."""
    engine = db.make_engine(database_url)
    try:
        with engine.begin() as connection:
            _insert_head(connection, "T-RPM")
            before = connection.execute(GENERATION).scalar() or 0
            connection.execute(text("UPDATE heads SET max_rpm = 7000, rod_material = 'steel', "
                                    "reciprocating_mass_g = 600, rod_section_area_mm2 = 150 WHERE head_id = 'T-RPM'"))
            after = connection.execute(GENERATION).scalar() or 0
    finally:
        engine.dispose()
    assert after > before


def test_the_heads_generation_triggers_survive_a_downgrade_below_the_running_columns(empty_database_url):
    """Dropping 0007's columns must not rebuild the table (and so drop 0004's triggers)."""
    db.upgrade(empty_database_url)
    db.downgrade(empty_database_url, "0006")
    engine = db.make_engine(empty_database_url)
    try:
        with engine.begin() as connection:
            before = connection.execute(GENERATION).scalar() or 0
            _insert_head(connection, "T-DOWN")
            after = connection.execute(GENERATION).scalar() or 0
    finally:
        engine.dispose()
    assert after > before


def test_plugs_are_indexed_on_thread_and_seat_for_the_fitting_search(database_url):
    engine = db.make_engine(database_url)
    try:
        indexes = {index["name"]: index["column_names"] for index in inspect(engine).get_indexes("plugs")}
    finally:
        engine.dispose()
    assert indexes["ix_plugs_thread_seat"] == ["thread", "seat"]


def test_sqlite_connections_use_wal_and_enforce_foreign_keys(tmp_path):
    engine = db.make_engine(f"sqlite:///{tmp_path / 'pragmas.db'}")
    try:
        with engine.connect() as connection:
            assert connection.execute(text("PRAGMA journal_mode")).scalar() == "wal"
            assert connection.execute(text("PRAGMA foreign_keys")).scalar() == 1
    finally:
        engine.dispose()


def test_plugfit_db_upgrade_and_downgrade_work_from_the_command_line(tmp_path):
    from click.testing import CliRunner

    from service.cli import main

    url = f"sqlite:///{tmp_path / 'cli.db'}"
    env = {"PLUGFIT_DATABASE_URL": url}
    assert CliRunner().invoke(main, ["db", "upgrade"], env=env).exit_code == 0
    assert CliRunner().invoke(main, ["db", "current"], env=env).stdout.strip() == head_revision()
    assert CliRunner().invoke(main, ["db", "downgrade", "base"], env=env).exit_code == 0
    assert CliRunner().invoke(main, ["db", "current"], env=env).stdout.strip() == "base"
