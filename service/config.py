"""Settings: class defaults, overridden by `PLUGFIT_`-prefixed environment variables.

One function (`load_settings`) is shared by the Flask app, the CLI and Alembic's
`env.py`, so `plugfit db upgrade`, `alembic upgrade head` and the running service can
never disagree about which database they talk to.
"""
from __future__ import annotations

import os
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

ENV_PREFIX = "PLUGFIT_"
MIB = 1024 * 1024


class Defaults:
    """Every setting the service reads, with its default. The environment variable is
    `PLUGFIT_<NAME>`; its text is converted to the type of the default below."""

    # None means: SQLite in the Flask instance folder (`instance/plugfit.db`).
    DATABASE_URL: str | None = None
    # Seconds to wait for the database (a connection to a server database, a free pooled
    # connection, SQLite's lock) before the request gets a 503 problem.
    DATABASE_TIMEOUT: int = 5
    # Reads (GETs, fit-checks, batches, diagrams) are open unless this is on.
    REQUIRE_KEY_FOR_READS: bool = False
    # Largest request body accepted; larger bodies get a 413 problem.
    MAX_BODY_BYTES: int = 32 * MIB
    # Most items one batch may hold (used by the batch endpoint).
    MAX_BATCH_ITEMS: int = 50_000
    # Most data rows one import over HTTP may hold; larger files go through `plugfit import`.
    # Chosen so an import at the cap ends far inside TIMEOUT (docs/performance.md, Imports).
    MAX_IMPORT_ROWS: int = 50_000
    # Largest `page_size` a list accepts.
    MAX_PAGE_SIZE: int = 1000
    # Python logging level name for the service's own log lines.
    LOG_LEVEL: str = "INFO"

    # The server (`plugfit serve`, gunicorn); see service/web/serving.py for the worker model.
    # Address and port to listen on.
    BIND: str = "127.0.0.1:8000"
    # Worker processes; 0 (the default) means one per CPU core, plus one.
    WORKERS: int = 0
    # Threads per worker; above 1 selects gunicorn's gthread workers.
    THREADS: int = 1
    # Seconds a worker may stay silent before it is replaced.
    TIMEOUT: int = 30
    # Seconds running requests get to finish on a stop or reload.
    GRACEFUL_TIMEOUT: int = 10
    # Seconds an idle keep-alive connection is held (set above the idle timeout of a
    # load balancer that keeps connections to the workers open).
    KEEPALIVE: int = 5
    # A worker is replaced after this many requests, plus up to the jitter, so they
    # never all restart at once.
    MAX_REQUESTS: int = 10_000
    MAX_REQUESTS_JITTER: int = 1_000


SETTING_NAMES: tuple[str, ...] = tuple(
    name for name in vars(Defaults) if name.isupper() and not name.startswith("_")
)

_TRUE = {"1", "true", "yes", "on"}
_FALSE = {"0", "false", "no", "off", ""}


class SettingError(ValueError):
    """An environment variable that cannot be read as its setting's type."""


@dataclass(frozen=True)
class UnknownSetting:
    """A `PLUGFIT_` variable that names no setting (most likely a typo); reported, not fatal."""

    variable: str


def _convert(name: str, text: str) -> Any:
    default = getattr(Defaults, name)
    annotation = Defaults.__annotations__.get(name, "str")
    if isinstance(default, bool) or annotation == "bool":
        lowered = text.strip().lower()
        if lowered in _TRUE:
            return True
        if lowered in _FALSE:
            return False
        raise SettingError(f"{ENV_PREFIX}{name}={text!r}: expected 1/0, true/false, yes/no or on/off")
    if isinstance(default, int) or annotation == "int":
        try:
            value = int(text.strip().replace("_", ""))
        except ValueError:
            raise SettingError(f"{ENV_PREFIX}{name}={text!r}: expected a whole number") from None
        if value < 1:
            raise SettingError(f"{ENV_PREFIX}{name}={text!r}: must be at least 1")
        return value
    value = text.strip()
    if default is None and not value:
        return None  # an empty PLUGFIT_DATABASE_URL means "use the default"
    return value


def from_environment(environ: Mapping[str, str] | None = None) -> tuple[dict[str, Any], list[UnknownSetting]]:
    """Settings found in the environment, converted, plus the `PLUGFIT_` names nobody reads."""
    environ = os.environ if environ is None else environ
    found: dict[str, Any] = {}
    unknown: list[UnknownSetting] = []
    for variable, text in environ.items():
        if not variable.startswith(ENV_PREFIX):
            continue
        name = variable[len(ENV_PREFIX):]
        if name in SETTING_NAMES:
            found[name] = _convert(name, text)
        elif not name.startswith("TEST_"):  # PLUGFIT_TEST_* belong to the test suite
            unknown.append(UnknownSetting(variable))
    return found, unknown


def default_database_url(instance_path: str | os.PathLike[str]) -> str:
    """The embedded default: one SQLite file in the instance folder."""
    return f"sqlite:///{Path(instance_path).resolve() / 'plugfit.db'}"


def load_settings(
    overrides: Mapping[str, Any] | None = None,
    environ: Mapping[str, str] | None = None,
    *,
    instance_path: str | os.PathLike[str],
) -> dict[str, Any]:
    """Defaults, then environment, then explicit overrides; DATABASE_URL always resolved
    (the instance path is Flask's, so the app passes its own)."""
    settings: dict[str, Any] = {name: getattr(Defaults, name) for name in SETTING_NAMES}
    settings.update(from_environment(environ)[0])
    settings.update(overrides or {})
    if not settings.get("DATABASE_URL"):
        settings["DATABASE_URL"] = default_database_url(instance_path)
    return settings
