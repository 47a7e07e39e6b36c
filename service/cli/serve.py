"""`plugfit serve`: the API under gunicorn."""
from __future__ import annotations

from typing import Any

import click
from flask import Flask

from service.cli.common import with_app
from service.store import db
from service.web import serving


def _head_revision() -> str | None:
    from alembic.script import ScriptDirectory

    return ScriptDirectory.from_config(db.alembic_config("sqlite://")).get_current_head()


def run_gunicorn(settings: dict[str, Any]) -> None:
    """Run gunicorn in this process with `settings` (service.web.serving.gunicorn_settings);
    each worker builds its own app (and engine) after the fork, so no database
    connection is shared between processes."""
    from gunicorn.app.base import BaseApplication

    class PlugfitServer(BaseApplication):
        def load_config(self) -> None:
            for key, value in settings.items():
                self.cfg.set(key, value)

        def load(self):
            from service.web import create_app

            return create_app()

    PlugfitServer().run()


@click.command("serve")
@click.option("--host", help="Address to listen on.  [default: from PLUGFIT_BIND, 127.0.0.1]")
@click.option("--port", type=click.IntRange(1, 65535), help="Port to listen on.  [default: from PLUGFIT_BIND, 8000]")
@click.option("--workers", type=click.IntRange(1, 64),
              help="Worker processes.  [default: PLUGFIT_WORKERS, else one per CPU core plus one]")
@click.option("--threads", type=click.IntRange(1, 64),
              help="Threads per worker; above 1 means gthread workers.  [default: PLUGFIT_THREADS, else 1]")
@with_app
def command(app: Flask, host: str | None, port: int | None, workers: int | None, threads: int | None) -> None:
    """Serve the API with gunicorn (default http://127.0.0.1:8000).

    Other server settings (timeouts, keep-alive, worker recycling) come from PLUGFIT_*
    variables; see service/web/serving.py and docs/operations.md."""
    bind = serving.server_settings()["BIND"]
    if host is not None or port is not None:
        bind_host, _, bind_port = bind.rpartition(":")
        bind = f"{host or bind_host}:{port or bind_port}"
    settings = serving.gunicorn_settings(bind=bind, workers=workers, threads=threads)
    url = app.config["DATABASE_URL"]
    current, head = db.current_revision(url), _head_revision()
    if current != head:
        raise click.ClickException(
            f"the database is at revision {current or 'base'}, the code needs {head}: run `plugfit db upgrade` first"
        )
    db.get_database(app).engine.dispose()  # the workers open their own connections
    click.echo(f"plugfit serving on http://{bind} (database: {db.safe_url(url)})", err=True)
    run_gunicorn(settings)

