"""gunicorn's settings for plugfit, from the same PLUGFIT_* variables as everything else.

Worker model: gunicorn's pre-fork `sync` workers, one request at a time each, by
default one per CPU core plus one (PLUGFIT_WORKERS=0 means that). A fit-check is pure
CPU in Python (the GIL lets one thread compute at a time) and its database reads take
well under a millisecond, so threads add switching, not throughput; the spare worker
keeps the cores busy while one waits on the database. On the project's 2-core machine
2, 3 and 5 sync workers measured within a few per cent of each other, gthread mixes
no better (benchmarks/bench_load.py; the figures are in docs/performance.md).

PLUGFIT_THREADS above 1 selects gthread workers: worth it when the database is remote
(PostgreSQL over a network), where a request waits on I/O, or when clients keep
connections alive without a buffering proxy in front. Then mind worker recycling
(PLUGFIT_MAX_REQUESTS): a gthread worker that retires closes its idle keep-alive
connections, and a client that sends on one just then sees a reset (measured: 18 in
20,000 requests with 2 workers x 4 threads); set PLUGFIT_MAX_REQUESTS very high there.

Each worker builds its own app, engine and connection pool after the fork (no
`preload_app`), so no database connection crosses a process boundary. A worker holds
no state a request leaves behind that the database does not decide: the catalogue is
read-only files, keys and records live in the database, and what the parts counter keeps
is checked against the database's change counters on every request
(service/store/records_cache.py), so any number of processes on any number of machines
can serve one database behind a load balancer.
"""
from __future__ import annotations

import gc
import os
from collections.abc import Mapping
from typing import Any

from service import config, units
from service.catalog_loader import load_catalog

# Settings of config.Defaults that configure the server rather than the app.
SERVER_SETTINGS: tuple[str, ...] = (
    "BIND", "WORKERS", "THREADS", "TIMEOUT", "GRACEFUL_TIMEOUT", "KEEPALIVE",
    "MAX_REQUESTS", "MAX_REQUESTS_JITTER",
)


# What gunicorn reads before the app sees a request, and refuses itself (an HTML 400,
# the one kind of answer that is not a problem; docs/operations.md lists them). The
# longest request plugfit's own limits allow is about 2.7 KiB of request line (a `q` of
# 200 four-byte characters percent-encoded, or three 64-character lengths on
# fitting-plugs) and a few short headers, so the request line gets gunicorn's ceiling
# (8,190 bytes, twice its default) and headers their defaults: 100 fields of at most
# 8,190 bytes each.
LIMIT_REQUEST_LINE = 8190
LIMIT_REQUEST_FIELDS = 100
LIMIT_REQUEST_FIELD_SIZE = 8190


def settle_worker(worker: Any = None) -> None:
    """gunicorn's `post_worker_init` hook, run once when a worker has built its app and
    before its first request: load what every request needs (the catalogue, the unit
    registry), then move every object alive at that moment into the collector's permanent
    generation (`gc.freeze`).

    Why: a worker's long-lived objects (modules, the unit registry, the catalogue, the
    schemas: over 100,000 objects) never become garbage, yet each full collection walked
    them all again; a 10,000-line batch triggers dozens of full collections, which cost it
    about a tenth of its time. The collector stays enabled and collects whatever a request
    leaves behind exactly as before; nothing changes inside a request. `worker` is
    gunicorn's and not used.
    """
    load_catalog()
    units.parse_quantity("1 mm", "length")
    gc.freeze()


def default_workers(cpu_count: int | None) -> int:
    """One sync worker per core and a spare: the work is CPU-bound (module docstring)."""
    return max(1, cpu_count or 1) + 1


def server_settings(environ: Mapping[str, str] | None = None, **overrides: Any) -> dict[str, Any]:
    """The PLUGFIT_ server settings: defaults, then environment, then `overrides`
    that are not None (the `plugfit serve` options)."""
    settings = {name: getattr(config.Defaults, name) for name in SERVER_SETTINGS}
    found = config.from_environment(environ)[0]
    settings.update({name: value for name, value in found.items() if name in SERVER_SETTINGS})
    settings.update({name.upper(): value for name, value in overrides.items() if value is not None})
    return settings


def gunicorn_settings(environ: Mapping[str, str] | None = None, **overrides: Any) -> dict[str, Any]:
    """gunicorn's own setting names and values for `server_settings(...)`."""
    settings = server_settings(environ, **overrides)
    threads = settings["THREADS"]
    gunicorn = {
        "bind": settings["BIND"],
        "workers": settings["WORKERS"] or default_workers(os.cpu_count()),
        "threads": threads,
        "worker_class": "gthread" if threads > 1 else "sync",
        # A worker silent this long is killed and replaced (a stuck request cannot
        # take its worker down for good).
        "timeout": settings["TIMEOUT"],
        "graceful_timeout": settings["GRACEFUL_TIMEOUT"],
        "keepalive": settings["KEEPALIVE"],
        # Recycle workers now and then, staggered, so slow leaks cannot accumulate.
        "max_requests": settings["MAX_REQUESTS"],
        "max_requests_jitter": settings["MAX_REQUESTS_JITTER"],
        "preload_app": False,
        "post_worker_init": settle_worker,
        "limit_request_line": LIMIT_REQUEST_LINE,
        "limit_request_fields": LIMIT_REQUEST_FIELDS,
        "limit_request_field_size": LIMIT_REQUEST_FIELD_SIZE,
        "accesslog": None,  # the app logs one structured line per request
        "errorlog": "-",
    }
    if os.path.isdir("/dev/shm"):
        # gunicorn's heartbeat file: on a memory filesystem a slow disk cannot stall it.
        gunicorn["worker_tmp_dir"] = "/dev/shm"
    return gunicorn
