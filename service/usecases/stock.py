"""Put a validated exchange file into the database, and read a table back out for export.

Why a module apart from `service.formats.stock_file`: that one reads and writes text and knows
no database; this one writes rows and knows no text. The REST endpoints and the CLI
both call `apply_import` and `export_documents`, so a file does the same thing whichever
way it arrives.

All or nothing: `apply_import` only stages changes in the caller's session; the caller
commits (or, for a dry run or any error, closes the session, which rolls back). Rows are
validated before any is written (`service.formats.stock_file.parse`), so a file with one bad row
never reaches here.
"""
from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from dataclasses import asdict, dataclass
from types import SimpleNamespace
from typing import Any

from sqlalchemy import delete, insert, select
from sqlalchemy.orm import Session

from service.store import history, repository
from service.store.repository import Repository

UPSERT, REPLACE = "upsert", "replace"
MODES = (UPSERT, REPLACE)
# Rows per statement: well under SQLite's bound-parameter limit (32,766 since 3.32) for
# an IN list, and large enough that a 100,000-row file takes a few hundred statements.
CHUNK = 500

Progress = Callable[[int], None]


@dataclass
class ImportReport:
    """What an import did (or, in a dry run, would do)."""

    resource: str
    mode: str
    rows: int
    added: int = 0
    changed: int = 0
    unchanged: int = 0
    deleted: int = 0
    dry_run: bool = False

    def as_dict(self) -> dict[str, Any]:
        return asdict(self)


def repository_for(session: Session, resource: str) -> Repository:
    if resource == "plugs":
        return repository.plugs(session)
    if resource == "heads":
        return repository.heads(session)
    raise ValueError(f"no table for {resource!r}")


def _chunks(items: Sequence[Any], size: int = CHUNK) -> Iterator[Sequence[Any]]:
    for start in range(0, len(items), size):
        yield items[start:start + size]


def apply_import(session: Session, resource: str, documents: Sequence[dict[str, Any]], mode: str,
                 progress: Progress | None = None) -> ImportReport:
    """Stage the documents (loaded through the resource's schema) in `session`.

    upsert: add what is new, overwrite what differs, leave equal records untouched (their
    version and ETag stay). replace: the same, and delete every record the file does not
    name, so the file becomes the whole table. The caller commits.
    """
    if mode not in MODES:
        raise ValueError(f"mode must be one of {', '.join(MODES)}")
    repo = repository_for(session, resource)
    mapping = repo.mapping
    model, key = mapping.model, mapping.key
    key_column = getattr(model, key)
    report = ImportReport(resource, mode, len(documents))
    by_key = {document[key]: document for document in documents}
    # Every change goes into the history too, in this same transaction (service.store.history).
    changes: list[history.Change] = []

    if mode == REPLACE:
        stored = session.scalars(select(key_column)).all()
        gone = [identifier for identifier in stored if identifier not in by_key]
        for chunk in _chunks(gone):
            for row in session.scalars(select(model).where(key_column.in_(chunk))):
                changes.append(history.Change(getattr(row, key), mapping.document_of(row), None,
                                              version_before=row.version))
            session.execute(delete(model).where(key_column.in_(chunk)),
                            execution_options={"synchronize_session": False})
        report.deleted = len(gone)

    new_rows: list[dict[str, Any]] = []
    for chunk in _chunks(list(by_key)):
        existing = {getattr(row, key): row for row in session.scalars(select(model).where(key_column.in_(chunk)))}
        overwritten = []
        for identifier in chunk:
            columns = mapping.columns_from(by_key[identifier])
            row = existing.get(identifier)
            if row is None:
                new_rows.append(columns)
            elif all(getattr(row, column) == value for column, value in columns.items()):
                report.unchanged += 1
            else:
                overwritten.append((row, mapping.document_of(row), row.version))
                for column, value in columns.items():
                    if column != key:
                        setattr(row, column, value)
                report.changed += 1
        session.flush()
        changes += [history.Change(getattr(row, key), before, mapping.document_of(row), version_before, row.version)
                    for row, before, version_before in overwritten]
        if progress is not None:
            progress(len(chunk))
    for chunk in _chunks(new_rows):
        session.execute(insert(model), list(chunk))
    report.added = len(new_rows)
    # A new row starts at version 1 (the column's server default).
    changes += [history.Change(columns[key], None, mapping.document_of(SimpleNamespace(**columns)), None, 1)
                for columns in new_rows]
    history.record_changes(session, history.KIND_BY_KEY[key], changes, source=history.IMPORT)
    session.flush()
    return report


def export_documents(session: Session, resource: str) -> Iterator[dict[str, Any]]:
    """Every record of the table as the stored document, in identifier order, read in
    batches so a large table is never held in memory at once."""
    repo = repository_for(session, resource)
    mapping = repo.mapping
    query = select(mapping.model).order_by(getattr(mapping.model, mapping.key)).execution_options(yield_per=1000)
    for row in session.scalars(query):
        yield mapping.document_of(row)


def count(session: Session, resource: str) -> int:
    from sqlalchemy import func

    model = repository_for(session, resource).mapping.model
    return session.scalar(select(func.count()).select_from(model)) or 0
