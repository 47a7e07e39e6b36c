"""The inventory exchange format: CSV and JSON lines in, CSV out, for plugs and heads.

Why its own module: a shop moves its stock list between plugfit, spreadsheets and its
counter system as files, and a file must come back exactly as it went out. This module
only reads and writes text; `service.usecases.stock` puts the records into the database.

Columns are derived from the record schemas (`StoredPlugSchema`, `StoredHeadSchema`), so
a field added there appears here without a second list to keep in step, and every row is
validated by loading it through the same schema as the REST API (no validation is
repeated here). The rules, in one place:

- a length is three columns, `<name>_mm`, `<name>_plus_mm`, `<name>_minus_mm`; the
  tolerances are positive amounts in mm, empty when the length is exact. The value cell
  may also hold a string with units (`0.75 in`);
- a scalar quantity is one column named with its unit: `hex_mm`, `gap_mm`,
  `intake_pressure_bar` (absolute), `boost_pressure_bar` (gauge), `intake_temperature_k`,
  `ignition_voltage_kv`, `spark_advance_deg`, `max_rpm` (a name that ends in its unit keeps it once),
  `reciprocating_mass_g`, `rod_section_area_mm2`. Temperatures are in kelvin so a value round-trips exactly (a
  °C column would add and subtract 273.15 on every trip);
- a nested object is one column per member: `heat_range_scale`, `heat_range_value`,
  `boot_range_min_mm`, ...;
- booleans read `true`/`false` (also `yes`/`no`, `1`/`0`) and are written `true`/`false`;
- an empty cell means the value is absent (never zero);
- the header names the columns in any order; unknown columns are refused (a misspelt
  `reach` would otherwise be silently dropped), missing ones are absent values;
- lines starting with `#` before the header are comments (the demo files say there that
  they are invented data);
- UTF-8, with or without a byte-order mark; comma-separated; RFC 4180 quoting (read by
  `service.formats.text_file`, shared with build lists);
- a text cell a spreadsheet would run as a formula is written with a leading `'`, which
  an import removes again (`neutralise`, `unmark`).

Numbers are written in Python's shortest round-trip form (`repr`), so `float(cell)`
gives back the very float that was stored: export → import changes nothing.

Two readers give the same answers: `read_csv`/`read_json_lines` with `validate` load each
row whole through the schema (the reference, and what small files use); `RowReader` reads
a file as it streams in and loads each distinct design once (imports).
"""
from __future__ import annotations

import csv
import io
import math
import operator
import re
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass, field
from functools import cache
from typing import Any, BinaryIO, TextIO

import orjson
from marshmallow import Schema, ValidationError, fields

from schemas import field_loader
from schemas.fields import Length, Quantity
from schemas.specs import StoredHeadSchema, StoredPlugSchema
from service.fitment.model import Dim
from service.formats import json_text, text_file
from service.units import KINDS

CSV_MEDIA_TYPE = "text/csv"
JSON_LINES_MEDIA_TYPES = ("application/x-ndjson", "application/jsonl", "application/json-lines",
                          "application/x-jsonlines")
COMMENT_PREFIX = "#"
BYTE_ORDER_MARK_BYTES = b"\xef\xbb\xbf"
_LINE_END = re.compile(rb"\r\n|\r|\n")

# A file may be long; a problem document listing a hundred thousand bad rows would be
# larger than the file. The first this-many bad rows are listed (the detail says so).
MAX_LISTED_ERRORS = 1000

# Column-name suffix for each quantity kind's canonical unit (see service.units.KINDS).
_UNIT_SUFFIX = {"length": "mm", "pressure": "bar", "temperature": "k", "voltage": "kv", "angle": "deg",
                "torque": "nm", "speed": "rpm", "mass": "g", "area": "mm2"}

VALUE, PLUS, MINUS, SCALAR = "value", "plus", "minus", "scalar"
ROW_ERRORS = "_row"


@dataclass(frozen=True, slots=True)
class Column:
    """One CSV column: where its cell goes in the record and how it is read."""

    name: str
    field: str
    member: str | None
    part: str  # VALUE, PLUS or MINUS of a length; SCALAR otherwise
    reader: str  # "length", "number", "quantity", "text", "token"
    unit: str | None = None  # for quantities whose bare unit is not the column's unit


@dataclass(frozen=True)
class ExchangeFormat:
    """The columns of one resource's files and the schema its rows load through."""

    resource: str
    key: str
    schema_class: type[Schema]
    columns: tuple[Column, ...]

    @property
    def header(self) -> tuple[str, ...]:
        return tuple(column.name for column in self.columns)

    def column(self, name: str) -> Column | None:
        return _columns_by_name(self).get(name)

    def primary_column(self, field_name: str, member: str | None = None) -> str:
        """The column a schema error on `field_name` (and `member`) is reported under."""
        for column in self.columns:
            if column.field == field_name and column.member == member and column.part in (VALUE, SCALAR):
                return column.name
        return field_name if member is None else f"{field_name}_{member}"


@cache
def _columns_by_name(fmt: ExchangeFormat) -> dict[str, Column]:
    return {column.name: column for column in fmt.columns}


# --- the formats, derived from the schemas ------------------------------------------------

# Identifier and description first, stock last: the order a person reads a stock list in.
_PLUG_LEADING = ("sku", "description", "thread", "nonstandard_thread", "seat")
_PLUG_TRAILING = ("quantity_on_hand", "location")
_HEAD_LEADING = ("head_id", "description", "thread", "nonstandard_thread", "seat")


def _field_columns(name: str, schema_field: fields.Field, prefix: str = "", field_name: str | None = None,
                   member: str | None = None) -> list[Column]:
    stem = f"{prefix}{name}"
    owner = field_name or name
    if isinstance(schema_field, Length):
        return [Column(f"{stem}_mm", owner, member, VALUE, "length"),
                Column(f"{stem}_plus_mm", owner, member, PLUS, "length"),
                Column(f"{stem}_minus_mm", owner, member, MINUS, "length")]
    if isinstance(schema_field, Quantity):
        kind = KINDS[schema_field.kind]
        unit = None if kind.bare == kind.canonical else kind.canonical
        suffix = f"_{_UNIT_SUFFIX[kind.name]}"
        name = stem if stem.endswith(suffix) else stem + suffix  # max_rpm, not max_rpm_rpm
        return [Column(name, owner, member, SCALAR, "quantity", unit)]
    if isinstance(schema_field, fields.Nested):
        nested = schema_field.schema
        columns: list[Column] = []
        for member_name, member_field in nested.fields.items():
            columns += _field_columns(member_name, member_field, prefix=f"{stem}_", field_name=owner,
                                      member=member_name)
        return columns
    if isinstance(schema_field, (fields.Float, fields.Integer)):
        return [Column(stem, owner, member, SCALAR, "number")]
    if isinstance(schema_field, fields.Boolean):
        return [Column(stem, owner, member, SCALAR, "token")]
    if owner in ("description", "location") or member == "scale":
        return [Column(stem, owner, member, SCALAR, "text")]
    return [Column(stem, owner, member, SCALAR, "token")]


def _derive(resource: str, key: str, schema_class: type[Schema], leading: tuple[str, ...],
            trailing: tuple[str, ...] = ()) -> ExchangeFormat:
    schema = schema_class()
    order = list(leading) + [name for name in schema.fields if name not in leading and name not in trailing]
    order += list(trailing)
    columns: list[Column] = []
    for name in order:
        columns += _field_columns(name, schema.fields[name])
    return ExchangeFormat(resource, key, schema_class, tuple(columns))


@cache
def plug_format() -> ExchangeFormat:
    return _derive("plugs", "sku", StoredPlugSchema, _PLUG_LEADING, _PLUG_TRAILING)


@cache
def head_format() -> ExchangeFormat:
    return _derive("heads", "head_id", StoredHeadSchema, _HEAD_LEADING)


def format_for(resource: str) -> ExchangeFormat:
    if resource == "plugs":
        return plug_format()
    if resource == "heads":
        return head_format()
    raise ValueError(f"no exchange format for {resource!r}")


# --- reading -------------------------------------------------------------------------------

# Fields of a row that belong to the row alone: no schema-level rule reads them (the
# design's rules, such as a standard thread or a gasket on a flat seat, read only the
# other fields). A file repeats one design under many rows, so the rest of a row is
# loaded through the schema once per distinct set of cells (`RowReader`); these are
# loaded by the schema's own field objects for every row.
# tests/unit/test_import_fast_path.py holds that this gives what `schema.load` gives.
OWN_FIELDS = {"plugs": ("sku", "description", "quantity_on_hand", "location"), "heads": ("head_id", "description")}

# Spreadsheet formulas (see `neutralise`): a cell that starts with one of these runs as a
# formula when the file is opened in a spreadsheet.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
FORMULA_MARK = "'"
_PLAIN_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")


def neutralise(cell: str) -> str:
    """A cell as an export writes it: one `'` before a cell a spreadsheet would run as a
    formula (it starts with = + - @ tab or CR, possibly after `'`s), so the sheet shows it
    as text. A plain number such as -0.5 is a number, and is left alone."""
    if cell.lstrip(FORMULA_MARK).startswith(FORMULA_STARTS) and not _PLAIN_NUMBER.fullmatch(cell):
        return FORMULA_MARK + cell
    return cell


def unmark(cell: str) -> str:
    """The cell `neutralise` was given: exactly the `'` it added is removed."""
    if cell.startswith(FORMULA_MARK) and cell.lstrip(FORMULA_MARK).startswith(FORMULA_STARTS):
        return cell[1:]
    return cell


class FileUnusable(ValueError):
    """The file as a whole cannot be read (encoding, header); `errors` locates why."""

    def __init__(self, message: str, errors: dict[str, Any]) -> None:
        super().__init__(message)
        self.errors = errors


def _unusable(error: text_file.NotText) -> FileUnusable:
    return FileUnusable(f"The file cannot be read: {error}.", {str(error.line): {ROW_ERRORS: [str(error)]}})


@dataclass
class Validated:
    """The outcome of reading and validating a whole file."""

    documents: list[tuple[int, dict[str, Any]]] = field(default_factory=list)
    errors: dict[str, dict[str, Any]] = field(default_factory=dict)
    bad_rows: int = 0

    @property
    def ok(self) -> bool:
        return self.bad_rows == 0


def decode(data: bytes) -> str:
    try:
        return text_file.decode(data)
    except text_file.NotText as error:
        raise FileUnusable(f"The file is not UTF-8 text (byte {error.byte}, line {error.line}).",
                           {"file": [str(error)]}) from None


def _number(cell: str) -> float | None:
    try:
        value = float(cell)
    except ValueError:
        return None
    return value if math.isfinite(value) else None


def _raw_value(column: Column, cell: str) -> Any:
    """A non-length cell as a client would send it in JSON: plain numbers as numbers."""
    if column.reader in ("number", "quantity"):
        number = _number(cell)
        if number is not None:
            return f"{cell} {column.unit}" if column.unit else number
    return cell


def _header_of(cells: list[str], line: int, fmt: ExchangeFormat) -> list[str] | None:
    """The header, when `cells` is it (comments and blank lines come before it)."""
    if not cells or cells[0].lstrip().startswith(COMMENT_PREFIX) or not any(c.strip() for c in cells):
        return None
    header = [cell.strip() for cell in cells]
    _check_header(header, line, fmt)
    return header


def _no_header(fmt: ExchangeFormat) -> FileUnusable:
    return FileUnusable("The file has no header row.",
                        {"header": [f"expected a header naming columns such as {', '.join(fmt.header[:4])}"]})


def read_csv(text: str | Iterable[str], fmt: ExchangeFormat) -> Iterator[tuple[int, dict[str, Any]]]:
    """(line number, raw record) for each data row; the raw record is what a client
    would send as JSON, ready for the schema. Raises FileUnusable for a bad header."""
    header: list[str] | None = None
    try:
        for line, cells in text_file.csv_rows(text):
            if header is None:
                header = _header_of(cells, line, fmt)
                continue
            if not any(cell.strip() for cell in cells):
                continue
            yield line, _record(header, [unmark(cell) for cell in cells], fmt)
    except text_file.NotText as error:
        raise _unusable(error) from None
    if header is None:
        raise _no_header(fmt)


def _check_header(header: list[str], line: int, fmt: ExchangeFormat) -> None:
    known = _columns_by_name(fmt)
    unknown = [name for name in header if name not in known]
    seen: set[str] = set()
    repeated = [name for name in header if name in seen or seen.add(name)]
    problems = [f"unknown column {name!r}" for name in unknown]
    problems += [f"column {name!r} appears twice" for name in repeated]
    if fmt.key not in header:
        problems.append(f"the {fmt.key!r} column is required")
    if problems:
        raise FileUnusable(f"The header on line {line} cannot be used: {'; '.join(problems)}. "
                           f"Known columns: {', '.join(fmt.header)}.", {"header": problems})


def _record(header: Sequence[str], cells: Sequence[str], fmt: ExchangeFormat) -> dict[str, Any]:
    known = _columns_by_name(fmt)
    record: dict[str, Any] = {}
    lengths: dict[tuple[str, str | None], dict[str, Any]] = {}
    if len(cells) > len(header):
        record[ROW_ERRORS] = f"{len(cells)} cells but the header names {len(header)} columns"
    for name, cell in zip(header, cells, strict=False):
        column = known[name]
        if column.reader != "text":
            cell = cell.strip()
        if cell == "":
            continue
        if column.reader == "length":
            parts = lengths.setdefault((column.field, column.member), {})
            number = _number(cell)
            parts[column.part] = number if number is not None else cell
            continue
        _place(record, column, _raw_value(column, cell))
    for (field_name, member), parts in lengths.items():
        if PLUS in parts or MINUS in parts:
            value = {"unit": "mm", **({"value": parts[VALUE]} if VALUE in parts else {}),
                     "plus": parts.get(PLUS, 0.0), "minus": parts.get(MINUS, 0.0)}
        else:
            value = parts[VALUE]
        _place(record, Column("", field_name, member, VALUE, "length"), value)
    return record


def _place(record: dict[str, Any], column: Column, value: Any) -> None:
    if column.member is None:
        record[column.field] = value
    else:
        record.setdefault(column.field, {})[column.member] = value


def _json_line(line: str) -> Any:
    try:
        return json_text.loads(line)  # a number of thousands of digits reaches its field
    except RecursionError:  # the C decoder's answer to thousands of nested brackets
        return {ROW_ERRORS: "not JSON this service reads: nested too deeply"}
    except ValueError as error:
        return {ROW_ERRORS: f"not JSON: {error}"}


def read_json_lines(text: str | Iterable[str]) -> Iterator[tuple[int, Any]]:
    """(line number, parsed value) for each non-blank line; a line that is not JSON
    yields a `_row` error marker that validation reports under its line."""
    lines = re.split(r"\r\n|\r|\n", text) if isinstance(text, str) else text
    for number, line in enumerate(lines, start=1):
        if line.strip():
            yield number, _json_line(line.rstrip("\r\n"))


def _load(schema: Schema, raw: Any, fmt: ExchangeFormat, csv_columns: bool) -> tuple[dict[str, Any] | None,
                                                                                   dict[str, Any]]:
    """(document, {}) or (None, errors) for one record, through the schema."""
    if not isinstance(raw, dict):
        return None, {ROW_ERRORS: ["each line must be a JSON object"]}
    if ROW_ERRORS in raw:
        return None, {ROW_ERRORS: [raw[ROW_ERRORS]]}
    try:
        return schema.load(raw), {}
    except ValidationError as error:
        return None, (_column_errors(error.messages, fmt) if csv_columns else dict(error.messages))


def _repeated(fmt: ExchangeFormat, key: Any, first: int, csv_columns: bool) -> dict[str, Any]:
    column = fmt.primary_column(fmt.key) if csv_columns else fmt.key
    return {column: [f"{key!r} appears again (first on line {first})"]}


def validate(records: Iterable[tuple[int, Any]], fmt: ExchangeFormat, *, csv_columns: bool) -> Validated:
    """Load every record through the resource's schema; collect every bad row.

    `csv_columns`: report errors under CSV column names (`reach_mm`) rather than the
    record's field names (`reach`). A key that appears twice is an error on its second
    line, so an upsert never depends on row order. The reference path: imports go through
    `RowReader`, which gives the same answers faster.
    """
    schema = fmt.schema_class()
    outcome = Validated()
    first_line: dict[str, int] = {}
    for line, raw in records:
        document, errors = _load(schema, raw, fmt, csv_columns)
        if document is not None:
            key = document[fmt.key]
            if key in first_line:
                errors = _repeated(fmt, key, first_line[key], csv_columns)
            else:
                first_line[key] = line
                outcome.documents.append((line, document))
        if errors:
            outcome.bad_rows += 1
            if len(outcome.errors) < MAX_LISTED_ERRORS:
                outcome.errors[str(line)] = errors
    return outcome


def _column_errors(messages: Any, fmt: ExchangeFormat) -> dict[str, Any]:
    if not isinstance(messages, dict):
        return {ROW_ERRORS: messages if isinstance(messages, list) else [str(messages)]}
    errors: dict[str, list[str]] = {}
    for field_name, problem in messages.items():
        if field_name == "_schema":
            errors.setdefault(ROW_ERRORS, []).extend(problem)
        elif isinstance(problem, dict):
            for member, member_problem in problem.items():
                column = fmt.primary_column(field_name) if member == "_schema" else fmt.primary_column(field_name, member)
                errors.setdefault(column, []).extend(_flatten(member_problem))
        else:
            errors.setdefault(fmt.primary_column(field_name), []).extend(_flatten(problem))
    return errors


def _flatten(problem: Any) -> list[str]:
    if isinstance(problem, list):
        return [str(item) for item in problem]
    if isinstance(problem, dict):
        return [f"{key}: {message}" for key, value in problem.items() for message in _flatten(value)]
    return [str(problem)]


def parse(data: bytes, media_type: str, fmt: ExchangeFormat) -> Validated:
    """Read and validate a whole file sent as CSV or JSON lines (the reference path)."""
    text = decode(data)
    if media_type in JSON_LINES_MEDIA_TYPES:
        return validate(read_json_lines(text), fmt, csv_columns=False)
    return validate(read_csv(text, fmt), fmt, csv_columns=True)


def media_type_of(filename: str) -> str:
    """The media type a file's extension implies (the CLI reads files by name)."""
    lower = filename.lower()
    if lower.endswith((".jsonl", ".ndjson")):
        return JSON_LINES_MEDIA_TYPES[0]
    return CSV_MEDIA_TYPE


# --- reading a large file fast -----------------------------------------------------------


@dataclass(slots=True)
class Design:
    """What a row holds apart from its own fields (OWN_FIELDS), loaded through the schema
    once for every row with the same cells. `derived` is for what later layers compute
    from it once (its table columns, its history view)."""

    document: dict[str, Any]
    derived: dict[str, Any] = field(default_factory=dict)


@dataclass(slots=True)
class Row:
    """One data row: its loaded document, or the errors that refuse it."""

    line: int
    document: dict[str, Any] | None
    errors: dict[str, Any] | None = None
    design: Design | None = None


_UNSEEN = object()
_HASHABLE = (str, int, float, bool)
_OWN_VALUES_KEPT = 100_000
# Stands for the row's own identifier while its design is loaded (any valid identifier).
_PLACEHOLDER_KEY = "0"


class RowReader:
    """Reads a file row by row as it streams in, each row validated by the resource's
    schema (the same rules, messages and documents as `validate`):

    - the cells of a row other than its own fields are loaded through the schema once
      per distinct set of cells (a stock list carries each design under many skus);
    - the own fields are loaded by the schema's field objects themselves;
    - a row with any error is loaded again whole through the schema, which then names
      every error exactly as `validate` would.

    `first_line` maps every key read so far to its line (a repeated key is an error).
    """

    def __init__(self, fmt: ExchangeFormat) -> None:
        self.fmt = fmt
        self.schema = fmt.schema_class()
        self.first_line: dict[str, int] = {}
        self._own = OWN_FIELDS[fmt.resource]
        self._own_fields = {name: self.schema.fields[name] for name in self._own}
        self._designs: dict[Any, Design | None] = {}
        # Own values other than the key repeat (stock counts, bins, descriptions): each
        # distinct one is loaded once (a valid one only; the class is part of the key, as
        # 1, 1.0 and True are equal in Python but not to a schema).
        self._own_values: dict[tuple[str, type, Any], Any] = {}

    # -- CSV --
    def csv(self, lines: Iterable[str] | str) -> Iterator[Row]:
        """The rows of a CSV file (text, or lines as `text_file.lines_of` reads them).
        Raises FileUnusable for a file that cannot be read as a whole."""
        fmt, header = self.fmt, None
        known = _columns_by_name(fmt)
        try:
            for line, cells in text_file.csv_rows(lines):
                if header is None:
                    header = _header_of(cells, line, fmt)
                    if header is not None:
                        width = len(header)
                        design_at = [at for at, name in enumerate(header) if known[name].field not in self._own]
                        design_header = [header[at] for at in design_at]
                        design_cells = operator.itemgetter(*design_at) if design_at else (lambda _cells: ())
                        own_at = [(at, known[name]) for at, name in enumerate(header)
                                  if known[name].field in self._own]
                    continue
                joined = "".join(cells)
                if not joined.strip():
                    continue
                if FORMULA_MARK in joined:
                    cells = [unmark(cell) for cell in cells]
                if len(cells) != width:
                    if len(cells) > width:
                        yield self._whole_csv_row(line, header, cells)
                        continue
                    cells = cells + [""] * (width - len(cells))
                key = design_cells(cells)
                design = self._designs.get(key, _UNSEEN)
                if design is _UNSEEN:
                    raw = _record(design_header, key if isinstance(key, tuple) else (key,), fmt)
                    design = self._designs[key] = self._design(raw)
                own: dict[str, Any] = {}
                for at, column in own_at:
                    cell = cells[at]
                    if column.reader != "text":
                        cell = cell.strip()
                    if cell != "":
                        own[column.field] = _raw_value(column, cell)
                document = None if design is None else self._with_own(design, own)
                if document is None:
                    yield self._whole_csv_row(line, header, cells)
                else:
                    yield self._keyed(line, document, design, csv_columns=True)
        except text_file.NotText as error:
            raise _unusable(error) from None
        if header is None:
            raise _no_header(fmt)

    def _whole_csv_row(self, line: int, header: list[str], cells: list[str]) -> Row:
        return self._whole(line, _record(header, cells, self.fmt), csv_columns=True)

    # -- JSON lines --
    def json_lines(self, lines: Iterable[str] | str) -> Iterator[Row]:
        """The rows of a JSON-lines file, one object per non-blank line."""
        for line, raw in read_json_lines(lines):
            if not isinstance(raw, dict) or ROW_ERRORS in raw:
                yield self._whole(line, raw, csv_columns=False)
                continue
            own = {name: raw[name] for name in self._own if name in raw}
            rest = {name: value for name, value in raw.items() if name not in own}
            try:
                key: Any = orjson.dumps(rest, option=orjson.OPT_SORT_KEYS)
            except (TypeError, orjson.JSONEncodeError):  # e.g. an integer beyond 64 bits
                yield self._whole(line, raw, csv_columns=False)
                continue
            design = self._designs.get(key, _UNSEEN)
            if design is _UNSEEN:
                design = self._designs[key] = self._design(rest)
            document = None if design is None else self._with_own(design, own)
            if document is None:
                yield self._whole(line, raw, csv_columns=False)
            else:
                yield self._keyed(line, document, design, csv_columns=False)

    # -- shared --
    def _design(self, raw: dict[str, Any]) -> Design | None:
        try:
            document = field_loader.load(self.schema, {**raw, self.fmt.key: _PLACEHOLDER_KEY})
        except ValidationError:
            return None
        del document[self.fmt.key]
        return Design(document)

    def _with_own(self, design: Design, own: dict[str, Any]) -> dict[str, Any] | None:
        document = dict(design.document)
        for name, value in own.items():
            loaded = self._own_values.get((name, value.__class__, value), _UNSEEN) \
                if value.__class__ in _HASHABLE else _UNSEEN
            if loaded is _UNSEEN:
                try:
                    loaded = self._own_fields[name].deserialize(value, name, own)
                except ValidationError:
                    return None
                if name != self.fmt.key and value.__class__ in _HASHABLE:
                    if len(self._own_values) >= _OWN_VALUES_KEPT:
                        self._own_values.clear()
                    self._own_values[(name, value.__class__, value)] = loaded
            document[name] = loaded
        if self.fmt.key not in document:
            return None
        return document

    def _whole(self, line: int, raw: Any, *, csv_columns: bool) -> Row:
        document, errors = _load(self.schema, raw, self.fmt, csv_columns)
        if document is None:
            return Row(line, None, errors)
        return self._keyed(line, document, None, csv_columns=csv_columns)

    def _keyed(self, line: int, document: dict[str, Any], design: Design | None, *, csv_columns: bool) -> Row:
        key = document[self.fmt.key]
        first = self.first_line.setdefault(key, line)
        if first != line:
            return Row(line, None, _repeated(self.fmt, key, first, csv_columns))
        return Row(line, document, None, design)


def rows_of(source: bytes | BinaryIO, media_type: str, reader: RowReader,
            progress: text_file.Progress | None = None) -> Iterator[Row]:
    """The rows of a file (bytes, or a binary file read as it streams), as `reader` reads
    them. Raises FileUnusable (not UTF-8, no header, a quote left open)."""
    lines = text_file.lines_of(source, progress)
    if media_type in JSON_LINES_MEDIA_TYPES:
        def checked() -> Iterator[str]:
            try:
                yield from lines
            except text_file.NotText as error:
                raise _unusable(error) from None
        return reader.json_lines(checked())
    return reader.csv(lines)


def more_rows_than(data: bytes, media_type: str, limit: int) -> int | None:
    """The number of data rows in `data` when it is above `limit`, else None. Cheap: a
    file within the limit says so by its count of line ends; a longer one is counted
    line by line on the bytes (about 0.3 s for 32 MiB on a busy 2-core machine)."""
    data = data.removeprefix(BYTE_ORDER_MARK_BYTES)
    bare_returns = data.count(b"\r") - data.count(b"\r\n")  # a CR alone ends a line too
    lines = data.count(b"\n") + bare_returns + (0 if data.endswith((b"\n", b"\r")) else 1)
    if lines - (0 if media_type in JSON_LINES_MEDIA_TYPES else 1) <= limit:
        return None
    physical = _LINE_END.split(data) if bare_returns else data.split(b"\n")
    if media_type in JSON_LINES_MEDIA_TYPES:
        rows = sum(1 for line in physical if line.strip())
    else:
        rows = _csv_rows_in(physical)
    return rows if rows > limit else None


def _csv_rows_in(physical: list[bytes]) -> int:
    """Data rows as `RowReader.csv` counts them: blank rows, comments before the header and
    the header itself are not rows. Lines without a quote (nearly all of a stock file) are
    judged on their bytes; a row with quotes, which may hold line breaks (an odd number of
    `"` so far: RFC 4180 doubles a quote inside a cell), is read by the csv module."""
    rows, header, pending = 0, False, None
    comment = COMMENT_PREFIX.encode()
    for line in physical:
        if pending is None and b'"' not in line:
            if not line.strip(b" \t\r,"):
                continue
            first = line
        else:
            if pending is not None:
                pending.append(line)
                if line.count(b'"') % 2 == 0:
                    continue
                cells, pending = _cells(pending), None
            elif line.count(b'"') % 2:  # a quoted cell runs on to the next line
                pending = [line]
                continue
            else:
                cells = _cells([line])
            if not any(cell.strip() for cell in cells):
                continue
            first = cells[0].encode()
        if header:
            rows += 1
        elif not first.lstrip().startswith(comment):
            header = True
    return rows + (pending is not None and header)


def _cells(lines: list[bytes]) -> list[str]:
    text = [line.decode("utf-8", "replace") + "\n" for line in lines]
    try:
        return next(csv.reader(text, strict=True), [])
    except csv.Error:
        return ["unreadable"]  # a row all the same (the import says what is wrong with it)


# --- writing -------------------------------------------------------------------------------


def format_number(value: float) -> str:
    """The shortest text that reads back as the same number (`19`, `0.2`, `1e-05`)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    text = repr(float(value))
    return text.removesuffix(".0")


def _cell(document: dict[str, Any], column: Column) -> str:
    value = document.get(column.field)
    if column.member is not None:
        value = value.get(column.member) if isinstance(value, dict) else None
    if value is None:
        return ""
    if column.reader == "length":
        dim: Dim = value
        if column.part == VALUE:
            return format_number(dim.nominal)
        if dim.is_exact:
            return ""
        return format_number(dim.plus if column.part == PLUS else dim.minus)
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return format_number(value)
    return neutralise(str(value))


def csv_header_line(fmt: ExchangeFormat) -> str:
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerow(fmt.header)
    return buffer.getvalue()


def csv_lines(documents: Iterable[dict[str, Any]], fmt: ExchangeFormat) -> Iterator[str]:
    """The header line, then one line per stored document (as `repository` reads them)."""
    yield csv_header_line(fmt)
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    for document in documents:
        writer.writerow([_cell(document, column) for column in fmt.columns])
        yield buffer.getvalue()
        buffer.seek(0)
        buffer.truncate()


def write_csv(documents: Iterable[dict[str, Any]], fmt: ExchangeFormat, out: TextIO,
              comments: Iterable[str] = ()) -> int:
    """Write the documents as CSV, after optional `# ` comment lines; returns the row count."""
    out.writelines(f"{COMMENT_PREFIX} {comment}\n" for comment in comments)
    rows = 0
    for line in csv_lines(documents, fmt):
        out.write(line)
        rows += 1
    return rows - 1  # the header line is not a row
