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
- UTF-8, with or without a byte-order mark; comma-separated; RFC 4180 quoting.

Numbers are written in Python's shortest round-trip form (`repr`), so `float(cell)`
gives back the very float that was stored: export → import changes nothing.
"""
from __future__ import annotations

import csv
import io
import math
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from functools import cache
from typing import Any, TextIO

from marshmallow import Schema, ValidationError, fields

from schemas.fields import Length, Quantity
from schemas.specs import StoredHeadSchema, StoredPlugSchema
from service.fitment.model import Dim
from service.formats import json_text
from service.units import KINDS

CSV_MEDIA_TYPE = "text/csv"
JSON_LINES_MEDIA_TYPES = ("application/x-ndjson", "application/jsonl", "application/json-lines",
                          "application/x-jsonlines")
COMMENT_PREFIX = "#"

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


class FileUnusable(ValueError):
    """The file as a whole cannot be read (encoding, header); `errors` locates why."""

    def __init__(self, message: str, errors: dict[str, Any]) -> None:
        super().__init__(message)
        self.errors = errors


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
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        raise FileUnusable(f"The file is not UTF-8 text (byte {error.start}).",
                           {"file": [f"not UTF-8: byte {error.start} cannot be read"]}) from None


def _number(cell: str) -> float | None:
    try:
        value = float(cell)
    except ValueError:
        return None
    return value if math.isfinite(value) else None


def read_csv(text: str, fmt: ExchangeFormat) -> Iterator[tuple[int, dict[str, Any]]]:
    """(line number, raw record) for each data row; the raw record is what a client
    would send as JSON, ready for the schema. Raises FileUnusable for a bad header."""
    reader = csv.reader(io.StringIO(text, newline=""))
    header: list[str] | None = None
    header_line = 0
    line = 1
    for cells in reader:
        start, line = line, reader.line_num + 1
        if header is None:
            if not cells or (cells[0].lstrip().startswith(COMMENT_PREFIX)) or not any(c.strip() for c in cells):
                continue
            header, header_line = [cell.strip() for cell in cells], start
            _check_header(header, header_line, fmt)
            continue
        if not any(cell.strip() for cell in cells):
            continue
        yield start, _record(header, cells, fmt, start)
    if header is None:
        raise FileUnusable("The file has no header row.",
                           {"header": [f"expected a header naming columns such as {', '.join(fmt.header[:4])}"]})


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


def _record(header: list[str], cells: list[str], fmt: ExchangeFormat, line: int) -> dict[str, Any]:
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
        value: Any = cell
        if column.reader in ("number", "quantity"):
            number = _number(cell)
            if number is not None:
                value = f"{cell} {column.unit}" if column.unit else number
        _place(record, column, value)
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


def read_json_lines(text: str) -> Iterator[tuple[int, Any]]:
    """(line number, parsed value) for each non-blank line; a line that is not JSON
    yields a `_row` error marker that validation reports under its line."""
    for number, line in enumerate(text.splitlines(), start=1):
        if not line.strip():
            continue
        try:
            yield number, json_text.loads(line)  # a number of thousands of digits reaches its field
        except ValueError as error:
            yield number, {ROW_ERRORS: f"not JSON: {error}"}


def validate(records: Iterable[tuple[int, Any]], fmt: ExchangeFormat, *, csv_columns: bool) -> Validated:
    """Load every record through the resource's schema; collect every bad row.

    `csv_columns`: report errors under CSV column names (`reach_mm`) rather than the
    record's field names (`reach`). A key that appears twice is an error on its second
    line, so an upsert never depends on row order.
    """
    schema = fmt.schema_class()
    outcome = Validated()
    first_line: dict[str, int] = {}
    for line, raw in records:
        errors: dict[str, Any] = {}
        if not isinstance(raw, dict):
            errors = {ROW_ERRORS: ["each line must be a JSON object"]}
        elif ROW_ERRORS in raw:
            errors = {ROW_ERRORS: [raw[ROW_ERRORS]]}
        else:
            try:
                document = schema.load(raw)
            except ValidationError as error:
                errors = _column_errors(error.messages, fmt) if csv_columns else dict(error.messages)
            else:
                key = document[fmt.key]
                if key in first_line:
                    errors = {fmt.key if not csv_columns else fmt.primary_column(fmt.key):
                              [f"{key!r} appears again (first on line {first_line[key]})"]}
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
    """Read and validate a whole file sent as CSV or JSON lines."""
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
    return str(value)


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
