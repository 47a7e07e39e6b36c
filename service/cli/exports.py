"""`plugfit export plugs|heads [-o FILE]`: the table as exchange CSV (`service.formats.stock_file`),
which `plugfit import` and `POST /v1/imports/...` read back unchanged."""
from __future__ import annotations

import sys
from pathlib import Path

import click
from flask import Flask

from service.cli.common import with_app
from service.formats import stock_file
from service.store import db
from service.usecases import stock


@click.group("export")
def command() -> None:
    """Export plugs or heads as CSV (standard output, or -o FILE)."""


def _export(app: Flask, resource: str, output: Path | None) -> None:
    fmt = stock_file.format_for(resource)
    with db.unit_of_work(app) as session:
        total = stock.count(session, resource)
        documents = stock.export_documents(session, resource)
        if output is None:
            rows = stock_file.write_csv(documents, fmt, sys.stdout)
        else:
            with click.progressbar(documents, length=total, label=f"writing {output}",
                                   file=sys.stderr, hidden=total < 2000) as bar, \
                    output.open("w", encoding="utf-8", newline="") as out:
                rows = stock_file.write_csv(bar, fmt, out)
    click.echo(f"exported {rows} {resource}", err=True)


_OUTPUT = click.option("-o", "--output", type=click.Path(dir_okay=False, writable=True, path_type=Path),
                       help="Write to this file instead of standard output.")


@command.command("plugs")
@_OUTPUT
@with_app
def export_plugs(app: Flask, output: Path | None) -> None:
    """Export every plug, ordered by sku."""
    _export(app, "plugs", output)


@command.command("heads")
@_OUTPUT
@with_app
def export_heads(app: Flask, output: Path | None) -> None:
    """Export every head, ordered by head_id."""
    _export(app, "heads", output)
