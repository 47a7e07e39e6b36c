"""`plugfit import plugs|heads FILE [--mode upsert|replace] [--dry-run]`.

Reads the inventory exchange format (`service.formats.stock_file`: CSV, or JSON lines for files
ending .jsonl/.ndjson) straight into the database PLUGFIT_DATABASE_URL names, with the
same rules as `POST /v1/imports/...`: every row validated through the record schema,
all or nothing, every bad row reported with its line and column.
"""
from __future__ import annotations

import sys
from pathlib import Path

import click
from flask import Flask

from service.cli.common import with_app
from service.formats import stock_file
from service.store import db
from service.usecases import stock

# Below this many rows a progress bar is more noise than help.
PROGRESS_FROM_ROWS = 2000


@click.group("import")
def command() -> None:
    """Import plugs or heads from a CSV or JSON-lines file (all or nothing)."""


def _stderr():
    return sys.stderr


def _import(app: Flask, resource: str, path: Path, mode: str, dry_run: bool) -> None:
    fmt = stock_file.format_for(resource)
    media_type = stock_file.media_type_of(path.name)
    try:
        text = stock_file.decode(path.read_bytes())
        records = list(stock_file.read_json_lines(text) if media_type != stock_file.CSV_MEDIA_TYPE
                       else stock_file.read_csv(text, fmt))
    except stock_file.FileUnusable as unusable:
        raise click.ClickException(f"{path}: {unusable}") from None
    show = len(records) >= PROGRESS_FROM_ROWS
    with click.progressbar(records, label="validating", file=_stderr(), hidden=not show) as bar:
        validated = stock_file.validate(bar, fmt, csv_columns=media_type == stock_file.CSV_MEDIA_TYPE)
    if not validated.ok:
        for line, errors in validated.errors.items():
            for column, messages in errors.items():
                for message in messages:
                    click.echo(f"{path}:{line}: {column}: {message}", err=True)
        listed = "" if len(validated.errors) == validated.bad_rows else f" (first {len(validated.errors)} listed)"
        raise click.ClickException(f"{validated.bad_rows} row(s) cannot be imported{listed}; nothing was written")
    documents = [document for _line, document in validated.documents]
    with db.unit_of_work(app) as session:
        with click.progressbar(length=len(documents), label="writing", file=_stderr(), hidden=not show) as bar:
            report = stock.apply_import(session, resource, documents, mode, progress=bar.update)
        report.dry_run = dry_run
        if not dry_run:
            session.commit()
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
