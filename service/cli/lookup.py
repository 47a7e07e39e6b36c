"""Where the embedded CLI (`plugfit check`, `plugfit validate` without --server) finds
the stored plugs and heads that `sku` and `head_id` name.

Two sources, in this order:

1. `--inventory FILE` (repeatable): files in the inventory exchange format that
   `GET /v1/exports/plugs|heads` writes (CSV; a file whose header has `sku` holds plugs,
   one with `head_id` holds heads) or JSON lines of stored plugs and heads (each line
   with its `sku` or `head_id`). When given, only these files are used, so a CI job's
   answer depends on nothing but its checkout.
2. Otherwise the local database, if it exists and is migrated: PLUGFIT_DATABASE_URL,
   default the SQLite file under `instance/`. It is never created or migrated here:
   validating a list must not leave a database behind.

Either way the lookups happen once per run with every distinct identifier (see
`service.usecases.batch.run_batch`); a list without references opens neither.
"""
from __future__ import annotations

import json
from collections.abc import Callable, Iterable
from pathlib import Path
from typing import Any

from service.cli import common
from service.formats import json_text
from service.usecases.batch import FetchReferences

Warn = Callable[[str], None]


class UnusableInput(ValueError):
    """An inventory or request file cannot be used; the message names the file and line."""


def _validated(path: Path, outcome: Any) -> list[tuple[int, dict]]:
    if not outcome.ok:
        first = next(iter(outcome.errors.items()))
        where, errors = first
        detail = "; ".join(f"{column}: {', '.join(map(str, messages if isinstance(messages, list) else [messages]))}"
                           for column, messages in errors.items())
        raise UnusableInput(f"{path}: {outcome.bad_rows} record(s) cannot be read; line {where}: {detail}")
    return outcome.documents


def _read_file(path: Path) -> tuple[list[dict], list[dict]]:
    from service.formats import stock_file

    try:
        data = path.read_bytes()
        text = stock_file.decode(data)
    except (OSError, stock_file.FileUnusable) as exc:
        raise UnusableInput(f"{path}: {exc}") from None
    if stock_file.media_type_of(path.name) in stock_file.JSON_LINES_MEDIA_TYPES:
        records = list(stock_file.read_json_lines(text))
        plug_records = [(line, r) for line, r in records if not (isinstance(r, dict) and "head_id" in r)]
        head_records = [(line, r) for line, r in records if isinstance(r, dict) and "head_id" in r]
        plugs = _validated(path, stock_file.validate(plug_records, stock_file.plug_format(), csv_columns=False))
        heads = _validated(path, stock_file.validate(head_records, stock_file.head_format(), csv_columns=False))
        return [doc for _, doc in plugs], [doc for _, doc in heads]
    header = _csv_header(text)
    if "sku" in header:
        fmt = stock_file.plug_format()
    elif "head_id" in header:
        fmt = stock_file.head_format()
    else:
        raise UnusableInput(f"{path}: the header names neither sku (plugs) nor head_id (heads)")
    try:
        documents = [doc for _, doc in _validated(path, stock_file.validate(stock_file.read_csv(text, fmt), fmt,
                                                                           csv_columns=True))]
    except stock_file.FileUnusable as exc:
        raise UnusableInput(f"{path}: {exc}") from None
    return (documents, []) if fmt.key == "sku" else ([], documents)


def _csv_header(text: str) -> set[str]:
    for line in text.splitlines():
        if line.strip() and not line.lstrip().startswith("#"):
            return {cell.strip() for cell in line.split(",")}
    return set()


def read_inventory(paths: list[Path]) -> tuple[dict[str, dict], dict[str, dict]]:
    """Every plug (by sku) and head (by head_id) in the files; an identifier in two
    files is refused, since which one wins would be an accident of option order."""
    plugs: dict[str, dict] = {}
    heads: dict[str, dict] = {}
    seen: dict[tuple[str, str], Path] = {}
    for path in paths:
        file_plugs, file_heads = _read_file(path)
        for kind, key, target, documents in (("sku", "sku", plugs, file_plugs),
                                             ("head_id", "head_id", heads, file_heads)):
            for document in documents:
                identifier = document[key]
                if (kind, identifier) in seen:
                    raise UnusableInput(f"{path}: {kind} {identifier!r} is also in {seen[(kind, identifier)]}")
                seen[(kind, identifier)] = path
                target[identifier] = document
    return plugs, heads


def inventory_fetcher(paths: list[Path]) -> FetchReferences:
    plugs, heads = read_inventory(paths)

    def fetch(skus: set[str], head_ids: set[str]) -> tuple[dict, dict]:
        return plugs, heads

    return fetch


# --- the local database -------------------------------------------------------------------


def database_url() -> str:
    """The URL the service would use: PLUGFIT_DATABASE_URL, else SQLite under instance/."""
    from flask import Flask

    from service import config

    instance_path = Flask("service", instance_relative_config=True).instance_path
    return config.load_settings(instance_path=instance_path)["DATABASE_URL"]


def _usable(url: str) -> str | None:
    """None when the database can be read, else why not (for the warning)."""
    from sqlalchemy.engine import make_url
    from sqlalchemy.exc import SQLAlchemyError

    from service.store import db

    parsed = make_url(url)
    if parsed.get_backend_name() == "sqlite":
        database = parsed.database
        if not database or database == ":memory:" or not Path(database).is_file():
            return f"no database file at {database}"
    try:
        revision = db.current_revision(url)
    except SQLAlchemyError as exc:
        return f"the database cannot be read ({type(exc).__name__})"
    if revision is None:
        return "the database has never been migrated (run plugfit db upgrade and plugfit seed)"
    return None


def database_fetcher(warn: Warn) -> FetchReferences:
    """Looks references up in the local database, or warns that there is none (then
    every reference is reported as unknown on its line)."""

    def fetch(skus: set[str], head_ids: set[str]) -> tuple[dict, dict]:
        url = database_url()
        problem = _usable(url)
        if problem is not None:
            warn(f"the build list names sku/head_id references but {problem}; give --inventory FILE "
                 "or set PLUGFIT_DATABASE_URL")
            return {}, {}
        from sqlalchemy.orm import Session

        from service.store import db
        from service.store.repository import fetch_documents

        engine = db.make_engine(url)
        try:
            with Session(engine) as session:
                return fetch_documents(session, skus, head_ids)
        finally:
            engine.dispose()

    return fetch


def references_from(inventory: Iterable[str], warn: Warn = common.warn) -> FetchReferences:
    """The look-up for `--inventory FILE ...` (the paths as given), or the local database
    when there are none."""
    paths = [Path(path) for path in inventory]
    return inventory_fetcher(paths) if paths else database_fetcher(warn)


def load_request_file(path: Path) -> Any:
    """A single fit-check request document (`plugfit check --file`)."""
    try:
        return json_text.loads(path.read_bytes())
    except (OSError, UnicodeDecodeError) as exc:
        raise UnusableInput(f"{path}: {exc}") from None
    except json.JSONDecodeError as exc:
        raise UnusableInput(f"{path}: line {exc.lineno}, column {exc.colno}: not valid JSON: {exc.msg}") from None
    except RecursionError:
        raise UnusableInput(f"{path}: not valid JSON for a fit-check: nested too deeply") from None
