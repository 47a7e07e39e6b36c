"""`plugfit db upgrade | downgrade | current`: Alembic, with the service's own settings."""
from __future__ import annotations

import click
from flask import Flask

from service.cli.common import with_app
from service.store import db


@click.group("db")
def command() -> None:
    """Database schema migrations (Alembic)."""


@command.command("upgrade")
@click.option("--revision", default="head", show_default=True, help="Target revision.")
@with_app
def upgrade(app: Flask, revision: str) -> None:
    """Apply migrations to PLUGFIT_DATABASE_URL (default: SQLite under instance/)."""
    url = app.config["DATABASE_URL"]
    db.upgrade(url, revision)
    click.echo(f"database at revision {db.current_revision(url)}: {db.safe_url(url)}", err=True)


@command.command("downgrade")
@click.argument("revision")
@with_app
def downgrade(app: Flask, revision: str) -> None:
    """Revert migrations down to REVISION ('-1' for one step, 'base' for an empty database)."""
    url = app.config["DATABASE_URL"]
    db.downgrade(url, revision)
    click.echo(f"database at revision {db.current_revision(url) or 'base'}: {db.safe_url(url)}", err=True)


@command.command("current")
@with_app
def current(app: Flask) -> None:
    """Print the revision the database is at ('base' when never migrated)."""
    click.echo(db.current_revision(app.config["DATABASE_URL"]) or "base")

