"""The application factory and its settings."""
from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from service.config import MIB, SettingError, from_environment, load_settings
from service.store import db
from service.web import create_app

REPO = Path(__file__).resolve().parents[2]


def test_the_defaults_are_the_documented_limits(tmp_path):
    settings = load_settings(environ={}, instance_path=tmp_path)
    assert settings["MAX_BODY_BYTES"] == 32 * 1024 * 1024  # contract: request body 32 MiB
    assert settings["MAX_BATCH_ITEMS"] == 50_000  # contract: batch 50,000 items
    assert settings["MAX_PAGE_SIZE"] == 1000  # contract: lists paginate at most 1,000
    assert settings["REQUIRE_KEY_FOR_READS"] is False  # contract: reads open by default


def test_without_a_database_url_the_app_uses_sqlite_in_its_instance_folder(tmp_path):
    settings = load_settings(environ={}, instance_path=tmp_path / "instance")
    assert settings["DATABASE_URL"] == f"sqlite:///{(tmp_path / 'instance' / 'plugfit.db').resolve()}"


def test_prefixed_environment_variables_override_the_defaults_with_their_types(monkeypatch, tmp_path):
    monkeypatch.setenv("PLUGFIT_DATABASE_URL", f"sqlite:///{tmp_path}/env.db")
    monkeypatch.setenv("PLUGFIT_REQUIRE_KEY_FOR_READS", "1")
    monkeypatch.setenv("PLUGFIT_MAX_BODY_BYTES", "1048576")
    app = create_app()
    try:
        assert app.config["DATABASE_URL"] == f"sqlite:///{tmp_path}/env.db"
        assert app.config["REQUIRE_KEY_FOR_READS"] is True
        assert app.config["MAX_BODY_BYTES"] == 1 * MIB
        # Flask enforces the body limit through MAX_CONTENT_LENGTH.
        assert app.config["MAX_CONTENT_LENGTH"] == 1 * MIB
    finally:
        db.get_database(app).engine.dispose()


def test_test_config_wins_over_the_environment(monkeypatch, database_url):
    monkeypatch.setenv("PLUGFIT_MAX_PAGE_SIZE", "200")
    app = create_app({"DATABASE_URL": database_url, "MAX_PAGE_SIZE": 10, "TESTING": True})
    try:
        assert app.config["MAX_PAGE_SIZE"] == 10
        assert app.testing
    finally:
        db.get_database(app).engine.dispose()


@pytest.mark.parametrize("value", ["yes please", "2x"])
def test_an_unreadable_setting_is_refused_with_its_variable_name(value):
    with pytest.raises(SettingError, match="PLUGFIT_"):
        from_environment({"PLUGFIT_REQUIRE_KEY_FOR_READS": value, "PLUGFIT_MAX_BODY_BYTES": value})


def test_a_misspelt_setting_is_reported_not_silently_used():
    found, unknown = from_environment({"PLUGFIT_MAX_BODY_BYTE": "10", "PATH": "/bin"})
    assert found == {}
    assert [u.variable for u in unknown] == ["PLUGFIT_MAX_BODY_BYTE"]


def test_each_call_builds_a_separate_app(database_url):
    first = create_app({"DATABASE_URL": database_url})
    second = create_app({"DATABASE_URL": database_url})
    try:
        assert first is not second
        assert db.get_database(first) is not db.get_database(second)
    finally:
        db.get_database(first).engine.dispose()
        db.get_database(second).engine.dispose()


def test_importing_the_service_creates_no_app_engine_or_database_file(tmp_path):
    """Importing every module must not touch the database the settings point at."""
    target = tmp_path / "must-not-exist.db"
    script = (
        "import importlib, pkgutil, service, schemas\n"
        "for package in (service, schemas):\n"
        "    for info in pkgutil.walk_packages(package.__path__, package.__name__ + '.'):\n"
        "        importlib.import_module(info.name)\n"
        "import service.cli\n"
    )
    env = {"PLUGFIT_DATABASE_URL": f"sqlite:///{target}", "PATH": "/usr/bin:/bin"}
    completed = subprocess.run([sys.executable, "-c", script], cwd=REPO, env=env, capture_output=True, text=True)
    assert completed.returncode == 0, completed.stderr
    assert not target.exists()
