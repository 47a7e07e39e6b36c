"""`plugfit serve`: the API under gunicorn."""
from __future__ import annotations

import os
from typing import Any

import click
from flask import Flask

from service import db
from service.commands.common import with_app


def _head_revision() -> str | None:
    from alembic.script import ScriptDirectory

    return ScriptDirectory.from_config(db.alembic_config("sqlite://")).get_current_head()


def run_gunicorn(host: str, port: int, workers: int, threads: int) -> None:
    """Run gunicorn in this process; each worker builds its own app (and engine) after
    the fork, so no database connection is shared between processes."""
    from gunicorn.app.base import BaseApplication

    class PlugfitServer(BaseApplication):
        def load_config(self) -> None:
            settings: dict[str, Any] = {
                "bind": f"{host}:{port}",
                "workers": workers,
                "threads": threads,
                "worker_class": "gthread" if threads > 1 else "sync",
                "accesslog": None,  # the app logs one structured line per request
                "errorlog": "-",
                "timeout": 120,
                "graceful_timeout": 10,
            }
            for key, value in settings.items():
                self.cfg.set(key, value)

        def load(self):
            from service import create_app

            return create_app()

    PlugfitServer().run()


@click.command("serve")
@click.option("--host", default="127.0.0.1", show_default=True, help="Address to listen on.")
@click.option("--port", default=8000, show_default=True, type=click.IntRange(1, 65535), help="Port to listen on.")
@click.option("--workers", default=lambda: min(4, (os.cpu_count() or 1)), show_default="CPU count, at most 4",
              type=click.IntRange(1, 64), help="Worker processes.")
@click.option("--threads", default=2, show_default=True, type=click.IntRange(1, 64), help="Threads per worker.")
@with_app
def command(app: Flask, host: str, port: int, workers: int, threads: int) -> None:
    """Serve the API with gunicorn (default http://127.0.0.1:8000)."""
    url = app.config["DATABASE_URL"]
    current, head = db.current_revision(url), _head_revision()
    if current != head:
        raise click.ClickException(
            f"the database is at revision {current or 'base'}, the code needs {head}: run `plugfit db upgrade` first"
        )
    db.get_database(app).engine.dispose()  # the workers open their own connections
    click.echo(f"plugfit serving on http://{host}:{port} (database: {db.safe_url(url)})", err=True)
    run_gunicorn(host, port, workers, threads)

