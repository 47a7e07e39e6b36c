"""gunicorn's settings come from PLUGFIT_* variables, with a documented worker model."""
from __future__ import annotations

import pytest

from service import config
from service.web import serving


def test_without_variables_the_server_listens_on_loopback_port_8000_with_a_sync_worker_per_core_and_one(monkeypatch):
    monkeypatch.setattr(serving.os, "cpu_count", lambda: 2)
    settings = serving.gunicorn_settings({})
    assert settings["bind"] == "127.0.0.1:8000"  # the contract's `plugfit serve` default
    assert settings["workers"] == 3
    assert settings["worker_class"] == "sync"
    assert settings["threads"] == 1
    assert settings["preload_app"] is False  # each worker opens its own connections after the fork


def test_plugfit_variables_set_workers_threads_bind_timeouts_and_recycling():
    settings = serving.gunicorn_settings({
        "PLUGFIT_BIND": "0.0.0.0:9000", "PLUGFIT_WORKERS": "5", "PLUGFIT_THREADS": "4",
        "PLUGFIT_TIMEOUT": "60", "PLUGFIT_GRACEFUL_TIMEOUT": "20", "PLUGFIT_KEEPALIVE": "75",
        "PLUGFIT_MAX_REQUESTS": "500", "PLUGFIT_MAX_REQUESTS_JITTER": "50",
    })
    assert (settings["bind"], settings["workers"], settings["threads"]) == ("0.0.0.0:9000", 5, 4)
    assert settings["worker_class"] == "gthread"  # more than one thread per worker
    assert (settings["timeout"], settings["graceful_timeout"], settings["keepalive"]) == (60, 20, 75)
    assert (settings["max_requests"], settings["max_requests_jitter"]) == (500, 50)


def test_command_line_options_win_over_the_environment_and_none_means_not_given():
    settings = serving.gunicorn_settings({"PLUGFIT_WORKERS": "5", "PLUGFIT_THREADS": "3"}, workers=2, threads=None)
    assert settings["workers"] == 2
    assert settings["threads"] == 3


def test_a_worker_count_that_is_not_a_number_is_refused_naming_the_variable():
    with pytest.raises(config.SettingError, match="PLUGFIT_WORKERS"):
        serving.gunicorn_settings({"PLUGFIT_WORKERS": "many"})


def test_server_variables_are_known_settings_so_the_app_does_not_warn_about_them():
    _, unknown = config.from_environment({"PLUGFIT_WORKERS": "3", "PLUGFIT_KEEPALIVE": "10"})
    assert unknown == []


def test_every_setting_gunicorn_is_given_is_one_gunicorn_knows():
    from gunicorn.config import Config

    known = Config().settings
    assert set(serving.gunicorn_settings({})) <= set(known)


def test_a_worker_settles_once_it_has_built_its_app_and_the_collector_stays_on():
    """`settle_worker` is gunicorn's post_worker_init (after the worker built its app,
    before its first request): what the worker loaded is frozen out of later full
    collections, and the collector itself stays enabled, so a request's garbage is
    collected as before."""
    import gc

    from gunicorn.config import Config

    settings = serving.gunicorn_settings({})
    assert settings["post_worker_init"] is serving.settle_worker
    gunicorn_config = Config()
    gunicorn_config.set("post_worker_init", settings["post_worker_init"])  # gunicorn takes it as a hook
    try:
        serving.settle_worker()
        assert gc.get_freeze_count() > 10_000  # modules, the unit registry, the catalogue
        assert gc.isenabled()
    finally:
        gc.unfreeze()
