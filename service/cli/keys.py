"""`plugfit keys create | list | revoke`: API keys for writes."""
from __future__ import annotations

import click
from flask import Flask
from sqlalchemy import delete, select
from sqlalchemy.exc import IntegrityError

from service.cli.common import with_app
from service.store import db
from service.store.models import ApiKey
from service.web import auth


@click.group("keys")
def command() -> None:
    """API keys (writes need `Authorization: Bearer <key>`)."""


@command.command("create")
@click.argument("name")
@with_app
def create(app: Flask, name: str) -> None:
    """Create a key called NAME and print it, alone, on standard output. It is shown
    once: only its hash is stored."""
    name = name.strip()
    if not name or len(name) > 100:
        raise click.BadParameter("must be 1 to 100 characters", param_hint="NAME")
    with db.unit_of_work(app) as session:
        try:
            new = auth.create_key(session, name)
            session.commit()
        except IntegrityError:
            raise click.ClickException(f"a key named {name!r} exists; revoke it or choose another name") from None
    click.echo(new.key)
    click.echo(f"created key {name!r}; store it now, it cannot be shown again", err=True)


@command.command("list")
@with_app
def list_keys(app: Flask) -> None:
    """List key names with the first characters of each key (never the key)."""
    with db.unit_of_work(app) as session:
        for key in session.scalars(select(ApiKey).order_by(ApiKey.name)):
            click.echo(f"{key.name}\t{key.prefix}…\t{key.created_at:%Y-%m-%d %H:%M}")


@command.command("revoke")
@click.argument("name")
@with_app
def revoke(app: Flask, name: str) -> None:
    """Delete the key called NAME; requests using it get 401 from then on."""
    with db.unit_of_work(app) as session:
        removed = session.execute(delete(ApiKey).where(ApiKey.name == name)).rowcount
        session.commit()
    if not removed:
        raise click.ClickException(f"no key named {name!r}")
    click.echo(f"revoked key {name!r}", err=True)
