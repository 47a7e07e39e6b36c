"""Put an exchange file into the database, and read a table back out for export.

Why a module apart from `service.formats.stock_file`: that one reads and writes text and knows
no database; this one writes rows and knows no text. The REST endpoints and the CLI
both call `import_rows` and `export_documents`, so a file does the same thing whichever
way it arrives.

One streaming pass: rows are written in chunks of CHUNK as they are read and validated,
with bulk statements (one `executemany` per chunk for new rows, one for changed rows, one
for their history entries). All or nothing: every statement goes into the caller's
session, and the caller commits only an outcome without a bad row (for a dry run or any
error it rolls back). Once a bad row is found nothing more is written, but every further
row is still read and validated, so the error report lists them all (the first
MAX_LISTED_ERRORS).

The database's triggers (migration 0004) see every inserted, updated and deleted row, so
the tables' generations move with an import as with any other write.
"""
from __future__ import annotations

import operator
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import asdict, dataclass, field
from types import SimpleNamespace
from typing import Any

import orjson
from sqlalchemy import bindparam, delete, func, insert, select, update
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session
from sqlalchemy.orm.exc import StaleDataError

from service.formats.stock_file import MAX_LISTED_ERRORS, OWN_FIELDS, Row
from service.store import history, repository
from service.store.models import utc_now
from service.store.repository import RecordMapping, Repository

UPSERT, REPLACE = "upsert", "replace"
MODES = (UPSERT, REPLACE)
# Rows per statement: well under SQLite's bound-parameter limit (32,766 since 3.32) for
# an IN list, and large enough that a 100,000-row file takes a few hundred statements.
CHUNK = 1000

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


@dataclass
class ImportOutcome:
    """An import's report, and its bad rows (then nothing may be committed)."""

    report: ImportReport
    errors: dict[str, dict[str, Any]] = field(default_factory=dict)
    bad_rows: int = 0

    @property
    def ok(self) -> bool:
        return self.bad_rows == 0


def repository_for(session: Session, resource: str) -> Repository:
    if resource == "plugs":
        return repository.plugs(session)
    if resource == "heads":
        return repository.heads(session)
    raise ValueError(f"no table for {resource!r}")


def _chunks(items: Sequence[Any], size: int = CHUNK) -> Iterator[Sequence[Any]]:
    for start in range(0, len(items), size):
        yield items[start:start + size]


class _Writer:
    """Writes chunks of validated rows of one resource, and their history entries."""

    def __init__(self, session: Session, resource: str, report: ImportReport) -> None:
        self.session = session
        self.mapping: RecordMapping = repository_for(session, resource).mapping
        self.table = self.mapping.model.__table__
        self.key = self.mapping.key
        self.kind = history.KIND_BY_KEY[self.key]
        self.report = report
        self.now = utc_now()
        self.actor = history.current_actor()
        self.own = [(name, column) for name, column in self.mapping.scalars
                    if name in OWN_FIELDS[resource]]
        self.compared = [column.key for column in self.table.columns
                         if column.key not in ("id", "version", "created_at", "updated_at")]
        key_column = self.table.c[self.key]
        self.changed_statement = (
            update(self.table)
            .where(key_column == bindparam("_key"), self.table.c.version == bindparam("_version"))
            .values({**{name: bindparam(name) for name in self.compared if name != self.key},
                     "version": self.table.c.version + 1, "updated_at": bindparam("_now")}))
        dialect = session.get_bind().dialect
        self.counts_updates = bool(dialect.supports_sane_multi_rowcount)
        self.staged = False
        self.new_rows = _BulkInsert(session, self.table, constants={
            "version": 1, "created_at": self.now, "updated_at": self.now})
        self.entries = _BulkInsert(session, history.ChangeRecord.__table__, constants={"changed_at": self.now},
                                   json_columns=("before", "after"))

    # -- a row's columns and history view, the design's part computed once --
    def _columns(self, row: Row) -> dict[str, Any]:
        document = row.document
        assert document is not None
        design = row.design
        if design is None:
            return self.mapping.columns_from(document)
        columns = design.derived.get("columns")
        if columns is None:
            columns = design.derived["columns"] = self.mapping.columns_from(design.document)
        columns = dict(columns)
        for name, column in self.own:
            columns[column] = document.get(name)
        return columns

    def _shown(self, row: Row, columns: dict[str, Any]) -> dict[str, Any] | None:
        """The new row as the API shows it (its history entry's `after`)."""
        design = row.design
        if design is None:
            return history.as_shown(self.kind, self.mapping.document_of(SimpleNamespace(**columns)))
        shown = design.derived.get("shown")
        if shown is None:
            design_columns = design.derived["columns"]
            stored = self.mapping.document_of(SimpleNamespace(**design_columns))
            shown = design.derived["shown"] = history.as_shown(self.kind, stored) or {}
        shown = dict(shown)
        for name, column in self.own:
            value = columns[column]
            if value is not None:
                shown[name] = value
        return shown

    def write(self, rows: Sequence[Row]) -> None:
        by_key = {row.document[self.key]: row for row in rows if row.document is not None}
        existing = {stored[self.key]: stored for stored in self.session.execute(
            select(self.table).where(self.table.c[self.key].in_(list(by_key)))).mappings()}
        new, changed, entries = [], [], []
        for identifier, row in by_key.items():
            columns = self._columns(row)
            stored = existing.get(identifier)
            if stored is None:
                new.append(columns)
                entries.append(self._entry(identifier, None, self._shown(row, columns), None, 1))
            elif all(stored[name] == columns[name] for name in self.compared):
                self.report.unchanged += 1
            else:
                before = history.as_shown(self.kind, self.mapping.document_of(SimpleNamespace(**stored)))
                changed.append({**columns, "_key": identifier, "_version": stored["version"], "_now": self.now})
                after = history.as_shown(self.kind, self.mapping.document_of(SimpleNamespace(**columns)))
                entries.append(self._entry(identifier, before, after, stored["version"], stored["version"] + 1))
        if new:
            try:
                self.new_rows.execute(new)
            except Exception as error:
                if not self._is_duplicate(error):
                    raise
                # Another writer created one of these keys after the chunk was read: as for
                # a record changed meanwhile, nothing is written and the import may be sent again.
                raise StaleDataError(f"a {self.key} of this chunk was created by another write while the "
                                     "import ran") from error
        if changed:
            updated = self._update(changed)
            if updated is not None and updated != len(changed):
                raise StaleDataError(f"{len(changed) - updated} {self.table.name} row(s) changed "
                                     "while the import ran")
        self.report.added += len(new)
        self.report.changed += len(changed)
        self._history(entries)

    def _is_duplicate(self, error: Exception) -> bool:
        dbapi = self.session.get_bind().dialect.dbapi
        return isinstance(error, IntegrityError) or (dbapi is not None and isinstance(error, dbapi.IntegrityError))

    def _update(self, changed: list[dict[str, Any]]) -> int | None:
        """Overwrite the changed rows (each only if its version is still the one read);
        how many were overwritten, when the driver says.

        PostgreSQL: the rows are copied into a temporary table and written with one
        UPDATE ... FROM, so migration 0004's statement trigger fires once per chunk and
        the rows cross the network in one stream. Elsewhere one `executemany`."""
        if not self.new_rows.copy:
            result = self.session.execute(self.changed_statement, changed)
            return result.rowcount if self.counts_updates else None
        staging = f"import_{self.table.name}"
        names = [name for name in self.compared if name != self.key]
        connection = self.session.connection()
        if not self.staged:
            connection.exec_driver_sql(
                f"CREATE TEMPORARY TABLE IF NOT EXISTS {staging} ON COMMIT DROP AS "
                f"SELECT {self.key}, version, {', '.join(names)} FROM {self.table.name} WITH NO DATA")
            self.staged = True
        connection.exec_driver_sql(f"TRUNCATE {staging}")
        columns = [self.key, "version", *names]
        with connection.connection.cursor() as cursor, \
                cursor.copy(f"COPY {staging} ({', '.join(columns)}) FROM STDIN") as copy:
            for row in changed:
                copy.write_row((row["_key"], row["_version"], *(row[name] for name in names)))
        assignments = ", ".join(f"{name} = {staging}.{name}" for name in names)
        result = connection.exec_driver_sql(
            f"UPDATE {self.table.name} SET {assignments}, version = {self.table.name}.version + 1, "
            f"updated_at = %(now)s FROM {staging} WHERE {self.table.name}.{self.key} = {staging}.{self.key} "
            f"AND {self.table.name}.version = {staging}.version", {"now": self.now})
        return result.rowcount

    def delete_all_but(self, keep: Iterable[str]) -> None:
        """replace: delete every record the file did not name."""
        kept = set(keep)
        key_column = self.table.c[self.key]
        gone = [identifier for identifier in self.session.scalars(select(key_column)) if identifier not in kept]
        for chunk in _chunks(gone):
            entries = []
            for stored in self.session.execute(select(self.table).where(key_column.in_(chunk))).mappings():
                before = history.as_shown(self.kind, self.mapping.document_of(SimpleNamespace(**stored)))
                entries.append(self._entry(stored[self.key], before, None, stored["version"], None))
            self.session.execute(delete(self.table).where(key_column.in_(chunk)))
            self._history(entries)
        self.report.deleted += len(gone)

    def _entry(self, identifier: str, before: dict | None, after: dict | None, version_before: int | None,
               version_after: int | None) -> dict[str, Any]:
        return history.entry(self.kind, identifier, before, after, self.actor, history.IMPORT, self.now,
                             version_before, version_after)

    def _history(self, entries: list[dict[str, Any]]) -> None:
        if entries:
            self.entries.execute(entries)


class _BulkInsert:
    """One table's INSERT of a chunk of rows: `COPY` on PostgreSQL, the driver's own
    `executemany` elsewhere. The values go to the driver as they are (floats, strings,
    booleans), without SQLAlchemy's processing of each parameter of each row, which cost
    more than the statement. What the driver would not take as it is is prepared here
    once: `constants` (the same for every row: processed once by the column's type) and
    JSON columns (written with orjson). Other backends' placeholders fall back to
    SQLAlchemy.

    Why COPY on PostgreSQL: migration 0004's trigger there fires once per statement, and
    `executemany` is one statement per row, each waiting for the server: 100,000 rows
    took over 40 s. One COPY per chunk fires it once and streams the rows."""

    def __init__(self, session: Session, table: Any, *, constants: dict[str, Any] | None = None,
                 json_columns: tuple[str, ...] = ()) -> None:
        self.session = session
        self.table = table
        dialect = session.get_bind().dialect
        self.mark = {"qmark": "?", "format": "%s", "pyformat": "%s"}.get(dialect.paramstyle)
        self.copy = dialect.name == "postgresql" and dialect.driver == "psycopg"
        self.constants = {}
        for name, value in (constants or {}).items():
            processor = table.c[name].type.bind_processor(dialect)
            self.constants[name] = processor(value) if processor is not None else value
        self.json_columns = json_columns
        self.raw_constants = constants or {}
        self.names: list[str] | None = None

    def execute(self, rows: list[dict[str, Any]]) -> None:
        if self.mark is None:
            self.session.execute(insert(self.table), [{**row, **self.raw_constants} for row in rows])
            return
        names = [name for name in rows[0] if name not in self.constants]
        tail = tuple(self.constants.values())
        columns = ", ".join(names + list(self.constants))
        statement = f"INSERT INTO {self.table.name} ({columns}) VALUES ({', '.join([self.mark] * (len(names) + len(tail)))})"
        json_at = [at for at, name in enumerate(names) if name in self.json_columns]
        cells_of = operator.itemgetter(*names)
        values = []
        for row in rows:
            cells = cells_of(row)
            if json_at:
                cells = list(cells)
                for at in json_at:  # None as JSON null, as SQLAlchemy's JSON type writes it
                    cells[at] = orjson.dumps(cells[at]).decode()
            values.append((*cells, *tail))
        if self.copy:
            with self.session.connection().connection.cursor() as cursor, \
                    cursor.copy(f"COPY {self.table.name} ({columns}) FROM STDIN") as copy:
                for row_values in values:
                    copy.write_row(row_values)
            return
        self.session.connection().exec_driver_sql(statement, values)


def import_rows(session: Session, resource: str, rows: Iterable[Row], mode: str, *,
                keys: Iterable[str] | None = None, progress: Progress | None = None) -> ImportOutcome:
    """Read `rows` (a `RowReader`'s, as the file streams in) and stage them in `session`.

    upsert: add what is new, overwrite what differs, leave equal records untouched (their
    version and ETag stay). replace: the same, and delete every record the file does not
    name (`keys`: every key the file holds, known once the rows are read), so the file
    becomes the whole table. The caller commits only an outcome that is `ok`.
    """
    if mode not in MODES:
        raise ValueError(f"mode must be one of {', '.join(MODES)}")
    outcome = ImportOutcome(ImportReport(resource, mode, 0))
    writer = _Writer(session, resource, outcome.report)
    pending: list[Row] = []
    seen: set[str] = set()
    for row in rows:
        if row.document is None:
            outcome.bad_rows += 1
            if len(outcome.errors) < MAX_LISTED_ERRORS:
                outcome.errors[str(row.line)] = row.errors or {}
            pending.clear()  # nothing more is written, but every row is still read
            continue
        outcome.report.rows += 1
        if outcome.bad_rows:
            continue
        if keys is None and mode == REPLACE:
            seen.add(row.document[writer.key])
        pending.append(row)
        if len(pending) >= CHUNK:
            writer.write(pending)
            if progress is not None:
                progress(len(pending))
            pending.clear()
    if outcome.bad_rows:
        return outcome
    if pending:
        writer.write(pending)
        if progress is not None:
            progress(len(pending))
    if mode == REPLACE:
        writer.delete_all_but(seen if keys is None else keys)
    session.flush()
    return outcome


def apply_import(session: Session, resource: str, documents: Sequence[dict[str, Any]], mode: str,
                 progress: Progress | None = None) -> ImportReport:
    """Stage documents already loaded through the resource's schema (no two with the same
    key) in `session`; the caller commits."""
    rows = (Row(number, document) for number, document in enumerate(documents, start=1))
    return import_rows(session, resource, rows, mode, progress=progress).report


def export_documents(session: Session, resource: str) -> Iterator[dict[str, Any]]:
    """Every record of the table as the stored document, in identifier order, read in
    batches so a large table is never held in memory at once."""
    repo = repository_for(session, resource)
    mapping = repo.mapping
    query = select(mapping.model).order_by(getattr(mapping.model, mapping.key)).execution_options(yield_per=1000)
    for row in session.scalars(query):
        yield mapping.document_of(row)


def count(session: Session, resource: str) -> int:
    model = repository_for(session, resource).mapping.model
    return session.scalar(select(func.count()).select_from(model)) or 0
