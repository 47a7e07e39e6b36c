"""`plugfit seed [--demo]`."""
from __future__ import annotations

import click
from flask import Flask

from service.cli.common import with_app
from service.store import db
from service.usecases import seeding


@click.command("seed")
@click.option("--demo", is_flag=True, help="Also load the invented demo shop from seed_catalog/demo/.")
@with_app
def command(app: Flask, demo: bool) -> None:
    """Load the standard sizes (and the demo shop); running it again changes nothing."""
    try:
        summary = seeding.seed_standard_sizes()
    except ValueError as error:
        raise click.ClickException(f"the standard-sizes files are not usable: {error}") from None
    click.echo(f"standard sizes: catalogue {summary.version}, {summary.threads} threads, {summary.reaches} "
               f"reaches, {summary.hexes} hexes, {summary.torques} torque guides (served from seed_catalog/)",
               err=True)
    if not demo:
        return
    if not seeding.demo_files():
        click.echo("demo shop: no demo files in seed_catalog/demo/ yet; nothing loaded", err=True)
        return
    with db.unit_of_work(app) as session:
        try:
            report = seeding.seed_demo(session)
        except seeding.SeedError as error:
            raise click.ClickException(f"demo shop not loaded (nothing written): {error}") from None
        session.commit()
    click.echo(f"demo shop ({', '.join(report.files)}): {report.added} added, {report.changed} changed, "
               f"{report.unchanged} unchanged", err=True)
