"""`plugfit import plugs|heads FILE [--mode upsert|replace] [--dry-run]`.

Reads the inventory exchange format (`service.formats.stock_file`: CSV, or JSON lines for files
ending .jsonl/.ndjson) straight into the database PLUGFIT_DATABASE_URL names, with the
same rules as `POST /v1/imports/...`: every row validated through the record schema,
all or nothing, every bad row reported with its line and column. Unlike the endpoint it
takes a file of any size (no PLUGFIT_MAX_IMPORT_ROWS): the file streams through, so
memory stays flat, and a progress bar follows it on a terminal.
"""
from __future__ import annotations

from pathlib import Path

import click
from flask import Flask
from sqlalchemy.orm.exc import StaleDataError

from service.cli.common import progress_bar, with_app
from service.formats import stock_file
from service.store import db
from service.usecases import stock


@click.group("import")
def command() -> None:
    """Import plugs or heads from a CSV or JSON-lines file of any size (all or nothing)."""


def _import(app: Flask, resource: str, path: Path, mode: str, dry_run: bool) -> None:
    fmt = stock_file.format_for(resource)
    media_type = stock_file.media_type_of(path.name)
    reader = stock_file.RowReader(fmt)
    # One pass: the file is read as it is written, a chunk of rows at a time, in one
    # transaction committed only when no row was bad. The bar follows the bytes read.
    with path.open("rb") as stream, db.unit_of_work(app) as session, \
            progress_bar(path.stat().st_size, label=f"importing {path.name}") as progress:
        try:
            outcome = stock.import_rows(session, resource, stock_file.rows_of(stream, media_type, reader, progress),
                                        mode, keys=reader.first_line)
        except stock_file.FileUnusable as unusable:
            raise click.ClickException(f"{path}: {unusable}") from None
        except StaleDataError as conflict:
            raise click.ClickException(f"{path}: {conflict}; nothing was written, run the import again") from None
        report = outcome.report
        report.dry_run = dry_run
        if outcome.ok and not dry_run:
            session.commit()
    if not outcome.ok:
        for line, errors in outcome.errors.items():
            for column, messages in errors.items():
                for message in messages:
                    click.echo(f"{path}:{line}: {column}: {message}", err=True)
        listed = "" if len(outcome.errors) == outcome.bad_rows else f" (first {len(outcome.errors)} listed)"
        raise click.ClickException(f"{outcome.bad_rows} row(s) cannot be imported{listed}; nothing was written")
    verb = "would change" if dry_run else "imported"
    click.echo(f"{resource} {verb} ({mode}): {report.rows} rows, {report.added} added, {report.changed} changed, "
               f"{report.unchanged} unchanged, {report.deleted} deleted", err=True)


def _options(func):
    func = click.option("--dry-run", is_flag=True, help="Validate and count, write nothing.")(func)
    func = click.option("--mode", type=click.Choice(stock.MODES), default=stock.UPSERT, show_default=True,
                        help="upsert: add and overwrite; replace: the file becomes the whole table.")(func)
    return click.argument("file", type=click.Path(exists=True, dir_okay=False, path_type=Path))(func)


@command.command("plugs")
@_options
@with_app
def import_plugs(app: Flask, file: Path, mode: str, dry_run: bool) -> None:
    """Import plugs (with their stock) from FILE."""
    _import(app, "plugs", file, mode, dry_run)


@command.command("heads")
@_options
@with_app
def import_heads(app: Flask, file: Path, mode: str, dry_run: bool) -> None:
    """Import heads from FILE."""
    _import(app, "heads", file, mode, dry_run)
