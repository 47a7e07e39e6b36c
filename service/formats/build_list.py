"""Reading build lists: the CSV format and the JSON document, into raw items.

A build list is what an engine builder keeps in version control: one line per engine
(or head variant) with the plug chosen for it. This module only turns the file into
items shaped like the batch endpoint's JSON items; `service.usecases.batch` loads each one
through the schemas and checks it, so CSV and JSON are validated by the same code.

Two kinds of problem are kept apart on purpose:

- the file as a whole cannot be used (not UTF-8, no header, an unknown column, a unit
  in a header that is not a unit of that quantity, a row with the wrong number of
  cells, JSON that does not parse): `BuildListError`, whose messages name the line and
  the column, and nothing is checked;
- one cell cannot be read (a length written as "abc"): only that line is invalid and
  the rest are still checked.

Lines before the header that start with `#` are comments. CSV columns (see README,
"Build lists"): `ref`, `note` (ignored), `waive`, `sku`,
`head_id`, `plug_<field>`, `head_<field>` and the options by their own names, where
<field> is a field of the plug or head schema (`plug_reach`, `head_port_depth`,
nested members joined by `_`: `plug_heat_range_scale`). A quantity column may carry
its unit as a suffix (`plug_reach_mm`, `head_port_depth_in`, `torque_lbf_ft`); then
its cells are plain numbers. Without a suffix a cell may carry its own unit
("0.75 in"). A length cell may carry a tolerance: `19 ± 0.2` (also `+/-`, `+-`) or
`19 +0.1/-0.3`, in the cell's (or the header's) unit.

Pure: no Flask, no database. Unit suffixes are checked with `service.units` (cached).
"""
from __future__ import annotations

import difflib
import json
import re
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

from marshmallow import Schema, ValidationError, fields

from schemas.batch import BatchRequestSchema
from schemas.fields import Length, Quantity
from schemas.specs import HeadInputSchema, OptionsSchema, PlugInputSchema
from service.formats import json_text, text_file
from service.units import KINDS, MAX_QUANTITY_TEXT, UnitError, parse_quantity

CSV_MEDIA_TYPES = frozenset({"text/csv", "application/csv"})
# Columns that are not fields: the line's label, free text, and its waivers.
REF_COLUMN, NOTE_COLUMN, WAIVE_COLUMN = "ref", "note", "waive"
# Lines before the header that start with this are comments (the inventory files' rule).
COMMENT_PREFIX = "#"
# At most this many whole-file problems are reported; past that the rest are alike.
MAX_PROBLEMS = 20

Path = tuple[Any, ...]


# --- results of reading -----------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Problem:
    """Why the file as a whole cannot be used, located as precisely as possible."""

    message: str
    line: int | None = None
    column: str | None = None

    def __str__(self) -> str:
        where = []
        if self.line is not None:
            where.append(f"line {self.line}")
        if self.column is not None:
            where.append(f"column {self.column!r}" if not self.column.isdigit() else f"column {self.column}")
        return f"{', '.join(where)}: {self.message}" if where else self.message


class BuildListError(ValueError):
    """The build list as a whole cannot be used; `problems` say where and why."""

    def __init__(self, problems: list[Problem]) -> None:
        self.problems = problems[:MAX_PROBLEMS]
        more = len(problems) - len(self.problems)
        text = "; ".join(str(problem) for problem in self.problems)
        super().__init__(text + (f"; and {more} more" if more > 0 else ""))

    def errors(self) -> dict[str, Any]:
        """For a problem document: `{"line 3": {"plug_reach_in": ["..."]}}`; problems
        without a line go under `document`."""
        out: dict[str, Any] = {}
        for problem in self.problems:
            where = f"line {problem.line}" if problem.line is not None else "document"
            out.setdefault(where, {}).setdefault(problem.column or "_", []).append(problem.message)
        return out


class NotJson(BuildListError):
    """The body or file does not parse as JSON at all (HTTP 400 rather than 422)."""


class TooManyItems(ValueError):
    """More items than the configured limit (PLUGFIT_MAX_BATCH_ITEMS)."""

    def __init__(self, limit: int) -> None:
        super().__init__(f"a build list may hold at most {limit} items (setting PLUGFIT_MAX_BATCH_ITEMS)")
        self.limit = limit


@dataclass(slots=True)
class RawItem:
    """One item as read, before the schemas see it.

    `data` has the JSON item's shape. For CSV, `line` is the line the row starts on,
    `cell_errors` holds cells that could not even be turned into that shape, and
    `columns` maps field paths to the column names the user wrote (shared by all rows),
    so errors can be reported by column.
    """

    position: int
    data: Any
    line: int | None = None
    cell_errors: dict[str, list[str]] = field(default_factory=dict)
    columns: Mapping[Path, str] | None = None

    @property
    def default_ref(self) -> str:
        return str(self.line if self.line is not None else self.position)


# --- the CSV columns, derived from the schemas -------------------------------------------


@dataclass(frozen=True, slots=True)
class FieldSpec:
    """A field a CSV column can fill: where it goes in the item and how cells are read."""

    path: Path
    reader: str  # "length", "quantity", "temperature", "list" or "text"
    kind: str | None = None  # the quantity kind, for unit suffixes


def _specs_of(schema: Schema, prefix: str, path: Path) -> dict[str, FieldSpec]:
    specs: dict[str, FieldSpec] = {}
    for name, schema_field in schema.fields.items():
        column, where = f"{prefix}{name}", path + (name,)
        if isinstance(schema_field, fields.Nested):
            specs.update(_specs_of(schema_field.schema, f"{column}_", where))
        elif isinstance(schema_field, Length):
            specs[column] = FieldSpec(where, "length", "length")
        elif isinstance(schema_field, Quantity):
            reader = "temperature" if schema_field.kind == "temperature" else "quantity"
            specs[column] = FieldSpec(where, reader, schema_field.kind)
        elif isinstance(schema_field, fields.List):
            specs[column] = FieldSpec(where, "list")
        else:
            specs[column] = FieldSpec(where, "text")
    return specs


@lru_cache(maxsize=1)
def field_specs() -> dict[str, FieldSpec]:
    """Every column name a build list may use (without unit suffixes), from the schemas.

    `sku` and `head_id` keep their own names; the other plug and head fields take a
    `plug_` / `head_` prefix; options go by their own names.
    """
    specs: dict[str, FieldSpec] = {"sku": FieldSpec(("plug", "sku"), "text"),
                                   "head_id": FieldSpec(("head", "head_id"), "text")}
    plug = {name: spec for name, spec in _specs_of(PlugInputSchema(), "plug_", ("plug",)).items()
            if name != "plug_sku"}
    head = {name: spec for name, spec in _specs_of(HeadInputSchema(), "head_", ("head",)).items()
            if name != "head_head_id"}
    specs.update(plug)
    specs.update(head)
    specs.update(_specs_of(OptionsSchema(), "", ("options",)))
    return specs


def column_names() -> list[str]:
    """All column names, for documentation and suggestions."""
    return [REF_COLUMN, NOTE_COLUMN, WAIVE_COLUMN, *field_specs()]


# --- reading cells ----------------------------------------------------------------------

_NUMBER = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?"
_SYMMETRIC = re.compile(rf"^\s*(?P<value>{_NUMBER})\s*(?P<unit>[^±+]*?)\s*(?:±|\+/-|\+-)\s*(?P<tol>{_NUMBER})\s*$")
_ASYMMETRIC = re.compile(
    rf"^\s*(?P<value>{_NUMBER})\s*(?P<unit>[^±+]*?)\s*\+\s*(?P<plus>{_NUMBER})\s*/\s*-\s*(?P<minus>{_NUMBER})\s*$")
_LIST_SEPARATORS = re.compile(r"[,;\s]+")


def _toleranced(text: str, header_unit: str | None) -> dict[str, Any] | None:
    """`19 ± 0.2`, `0.75 in +0.004/-0.002` as the schema's object form; None if neither."""
    if "±" not in text and "+" not in text:  # most cells: no tolerance, no regex
        return None
    if len(text) > MAX_QUANTITY_TEXT:
        # The patterns' space runs backtrack (1,000 spaces cost seconds); a cell this long
        # is no toleranced length, and parse_quantity refuses it with the cap's message.
        return None
    match = _SYMMETRIC.match(text) or _ASYMMETRIC.match(text)
    if match is None:
        return None
    cell_unit = match["unit"].strip()
    if cell_unit and header_unit:
        raise ValueError(f"the column is in {header_unit} (see its header): write a plain number")
    document: dict[str, Any] = {"value": float(match["value"]), "unit": cell_unit or header_unit or "mm"}
    if "tol" in match.groupdict():
        document["tol"] = float(match["tol"])
    else:
        document["plus"], document["minus"] = float(match["plus"]), float(match["minus"])
    return document


@dataclass(frozen=True, slots=True)
class Column:
    """One header cell, understood: what it fills and how to read its cells."""

    name: str
    path: Path | None  # None: ignored (note)
    read: Callable[[str], Any]


def _plain(text: str) -> str:
    return text


def _as_list(text: str) -> list[str]:
    return [part for part in _LIST_SEPARATORS.split(text.strip()) if part]


def _parse_waivers(text: str) -> list[dict[str, Any]]:
    """`CODE[,CODE]: reason`, several joined by `|`; a missing reason is left empty so the
    schema refuses it for this line with its own message."""
    waivers = []
    for part in text.split("|"):
        if not part.strip():
            continue
        codes, _, reason = part.partition(":")
        waivers.append({"codes": _as_list(codes), "reason": reason.strip()})
    return waivers


def _length_reader(header_unit: str | None, factor: float = 1.0) -> Callable[[str], Any]:
    """Cells of a length column. Under a unit in the header a plain number is scaled once
    to mm (a bare number, the cheapest form for the schema to load: `Length` reads it
    exactly as it reads `{"value": number, "unit": header_unit}`); a tolerance keeps the
    object form, in the header's unit."""

    def read(text: str) -> Any:
        if header_unit is None:
            return _toleranced(text, None) or text
        try:
            return float(text) * factor
        except ValueError:
            pass
        toleranced = _toleranced(text, header_unit)
        if toleranced is None:
            raise ValueError(f"the column is in {header_unit} (see its header): write a plain number")
        return toleranced

    return read


def _quantity_reader(unit: str, factor: float) -> Callable[[str], Any]:
    """Cells of a column with a linear unit suffix: numbers scaled once to the kind's
    bare unit (which is its canonical unit for every linear kind), no parsing per cell."""

    def read(text: str) -> Any:
        try:
            return float(text) * factor
        except ValueError:
            raise ValueError(f"the column is in {unit} (see its header): write a plain number") from None

    return read


def _temperature_reader(unit: str) -> Callable[[str], Any]:
    """Temperatures have offsets (degC, degF), so cells become strings with the unit;
    the parse cache makes repeated values free."""

    def read(text: str) -> Any:
        try:
            float(text)
        except ValueError:
            raise ValueError(f"the column is in {unit} (see its header): write a plain number") from None
        return f"{text} {unit}"

    return read


def _header_unit(suffix: str, kind: str) -> tuple[str, float]:
    """A header's unit suffix (`in`, `lbf_ft`, `degC`) as unit text and its factor."""
    unit = suffix.replace("_", " ").strip()
    if unit == KINDS[kind].canonical:  # `_mm` on a length: nothing to convert, no pint to load
        return unit, 1.0
    factor = parse_quantity(f"1 {unit}", kind)
    return unit, factor


def _understand_header(name: str, specs: dict[str, FieldSpec]) -> Column:
    key = name.lower()
    if key in (REF_COLUMN, WAIVE_COLUMN):
        return Column(name, (key,), _parse_waivers if key == WAIVE_COLUMN else _plain)
    if key == NOTE_COLUMN:
        return Column(name, None, _plain)
    if key in specs:
        spec = specs[key]
        reader = {"list": _as_list, "length": _length_reader(None)}.get(spec.reader, _plain)
        return Column(name, spec.path, reader)
    # The longest field name the header starts with; the rest is a unit suffix.
    candidates = [field_name for field_name in specs if key.startswith(field_name + "_")]
    if not candidates:
        close = difflib.get_close_matches(key, column_names(), n=3, cutoff=0.6)
        hint = f"; did you mean {' or '.join(close)}?" if close else "; see docs/build-lists.md for the columns"
        raise ValueError(f"unknown column{hint}")
    field_name = max(candidates, key=len)
    spec = specs[field_name]
    suffix = name[len(field_name) + 1:]
    if spec.kind is None:
        raise ValueError(f"{field_name} is not a quantity, so it takes no unit (remove _{suffix})")
    try:
        unit, factor = _header_unit(suffix, spec.kind)
    except UnitError:
        raise ValueError(f"{suffix!r} is not a unit of {spec.kind}") from None
    if spec.reader == "length":
        return Column(name, spec.path, _length_reader(unit, factor))
    if spec.reader == "temperature":
        return Column(name, spec.path, _temperature_reader(unit))
    return Column(name, spec.path, _quantity_reader(unit, factor))


def _read_header(header: list[str], line: int = 1) -> list[Column]:
    specs = field_specs()
    problems: list[Problem] = []
    columns: list[Column] = []
    filled: dict[Path, str] = {}
    for index, raw_name in enumerate(header):
        name = raw_name.strip().lstrip("\ufeff").strip()
        if not name:
            problems.append(Problem(f"column {index + 1} has no name", line, str(index + 1)))
            continue
        try:
            column = _understand_header(name, specs)
        except ValueError as exc:
            problems.append(Problem(str(exc), line, name))
            continue
        if column.path is not None:
            if column.path in filled:
                problems.append(Problem(f"fills the same field as column {filled[column.path]!r}", line, name))
                continue
            filled[column.path] = name
        columns.append(column)
    if problems:
        raise BuildListError(problems)
    return columns


# --- CSV --------------------------------------------------------------------------------


def _set(item: dict[str, Any], path: Path, value: Any) -> None:
    if len(path) == 1:
        item[path[0]] = value
        return
    target = item.get(path[0])
    if target is None:
        target = item[path[0]] = {}
    for key in path[1:-1]:
        inner = target.get(key)
        if inner is None:
            inner = target[key] = {}
        target = inner
    target[path[-1]] = value


def read_csv(text: str, *, max_items: int | None = None) -> list[RawItem]:
    """The items of a CSV build list (see the module docstring for the columns).

    Raises `BuildListError` when the file as a whole cannot be used and `TooManyItems`
    as soon as the list passes `max_items`.
    """
    text = text.lstrip("\ufeff")
    if "\x00" in text:
        raise BuildListError([Problem("the file holds NUL bytes: not a text CSV file")])
    lines = text_file.csv_rows(text)
    header, header_line = None, 0
    try:
        for line, cells in lines:
            header_line = line
            if any(cell.strip() for cell in cells) and not cells[0].lstrip().startswith(COMMENT_PREFIX):
                header = cells  # blank and comment lines come before it
                break
    except text_file.NotText as exc:
        raise BuildListError([Problem(f"cannot read the header: {exc.reason}", exc.line)]) from None
    if header is None:
        raise BuildListError([Problem("the file is empty: a build list starts with a header row",
                                      max(header_line, 1))])
    if len(header) == 1 and ";" in header[0]:
        raise BuildListError([Problem("the header has no commas: separate the columns with commas, "
                                      "not semicolons", header_line)])
    columns = _read_header(header, header_line)
    if not any(column.path and column.path[0] in ("plug", "head") for column in columns):
        raise BuildListError([Problem("no plug or head columns: give sku or plug_* columns, and head_id "
                                      "or head_* columns", header_line)])
    width = len(header)
    rows = _RowReader(columns)
    items: list[RawItem] = []
    problems: list[Problem] = []
    try:
        for start, cells in lines:
            if not any(cell.strip() for cell in cells):
                continue
            if len(cells) != width:
                where = header[len(cells)].strip() if len(cells) < width else str(len(cells))
                problems.append(Problem(f"expected {width} cells as in the header, found {len(cells)} "
                                        "(a comma inside a cell needs double quotes)", start, where))
                continue
            if max_items is not None and len(items) >= max_items:
                raise TooManyItems(max_items)
            items.append(rows.item(len(items) + 1, start, cells))
    except text_file.NotText as exc:
        problems.append(Problem(f"cannot read the row: {exc.reason}", exc.line))
    if problems:
        raise BuildListError(problems)
    if not items:
        raise BuildListError([Problem("no lines to check: the file has a header but no rows", header_line + 1)])
    return items


class _RowReader:
    """Turns rows into items. Build lists repeat the same plug and head cells on many
    lines, so each group of cells (plug, head, options) is read once per distinct
    content and the resulting sub-document is shared (read-only) by every line that
    repeats it; `service.usecases.batch` then loads it once, by identity."""

    GROUPS = ("plug", "head", "options")

    def __init__(self, columns: list[Column]) -> None:
        self.column_of: dict[Path, str] = {c.path: c.name for c in columns if c.path is not None}
        self.own = [(index, column) for index, column in enumerate(columns)
                    if column.path is not None and column.path[0] not in self.GROUPS]
        self.groups = []
        for group in self.GROUPS:
            members = [(index, column) for index, column in enumerate(columns)
                       if column.path is not None and column.path[0] == group]
            self.groups.append((group, members, {}))

    def item(self, position: int, line: int | None, cells: list[str]) -> RawItem:
        data: dict[str, Any] = {}
        cell_errors: dict[str, list[str]] = {}
        for group, members, cache in self.groups:
            key = tuple(cells[index] for index, _ in members)
            hit = cache.get(key)
            if hit is None:
                hit = cache[key] = self._group(members, cells)
            document, errors = hit
            if document or group != "options":
                data[group] = document
            for name, messages in errors.items():
                cell_errors.setdefault(name, []).extend(messages)
        for index, column in self.own:
            text = cells[index].strip()
            if text:
                _set(data, column.path, column.read(text))
        if line is not None:
            data.setdefault("ref", str(line))
        return RawItem(position, data, line, cell_errors, self.column_of)

    @staticmethod
    def _group(members: list[tuple[int, Column]], cells: list[str]) -> tuple[dict[str, Any], dict[str, list[str]]]:
        document: dict[str, Any] = {}
        errors: dict[str, list[str]] = {}
        for index, column in members:
            text = cells[index].strip()
            if not text:
                continue
            try:
                _set(document, column.path[1:], column.read(text))
            except ValueError as exc:
                errors.setdefault(column.name, []).append(str(exc))
        return document, errors


def item_from_cells(cells: Mapping[str, str]) -> RawItem:
    """One item from column names and cell texts, read exactly like a CSV line (what
    `plugfit check` builds from its options)."""
    return _RowReader(_read_header(list(cells))).item(1, None, list(cells.values()))


# --- JSON -------------------------------------------------------------------------------

@lru_cache(maxsize=1)
def _request_schema() -> BatchRequestSchema:
    return BatchRequestSchema()


def read_json_document(document: Any, *, max_items: int | None = None) -> list[RawItem]:
    """The items of a parsed `{"items": [...]}` document; the envelope is checked here,
    each item later on its own."""
    if not isinstance(document, dict):
        raise BuildListError([Problem('a build list in JSON is an object: {"items": [...]}')])
    try:
        envelope = _request_schema().load(document)
    except ValidationError as exc:
        raise BuildListError([Problem(_first_message(messages), None, name)
                              for name, messages in exc.normalized_messages().items()]) from None
    items = envelope["items"]
    if max_items is not None and len(items) > max_items:
        raise TooManyItems(max_items)
    return [RawItem(position, item) for position, item in enumerate(items, start=1)]


def _first_message(messages: Any) -> str:
    if isinstance(messages, list):
        return "; ".join(str(m) for m in messages)
    return str(messages)


def read_json_text(text: str, *, max_items: int | None = None) -> list[RawItem]:
    try:
        document = json_text.loads(text)
    except json.JSONDecodeError as exc:
        raise NotJson([Problem(f"not valid JSON: {exc.msg}", exc.lineno, str(exc.colno))]) from None
    except RecursionError:  # the C decoder's answer to thousands of nested brackets
        raise NotJson([Problem("not valid JSON for a build list: nested too deeply")]) from None
    return read_json_document(document, max_items=max_items)


def looks_like_json(text: str) -> bool:
    return text.lstrip("\ufeff \t\r\n").startswith("{")


def read_build_list(text: str, *, csv_format: bool | None = None, max_items: int | None = None) -> list[RawItem]:
    """CSV or JSON, as told or guessed (a JSON build list starts with `{`)."""
    if csv_format is None:
        csv_format = not looks_like_json(text)
    return read_csv(text, max_items=max_items) if csv_format else read_json_text(text, max_items=max_items)


def decode(data: bytes) -> str:
    """A build list's bytes as text; refuses anything that is not UTF-8 (with or without
    BOM). The one decoder of every text file (`service.formats.text_file`)."""
    try:
        return text_file.decode(data)
    except text_file.NotText as exc:
        raise BuildListError([Problem(exc.reason, exc.line)]) from None


# --- errors by column -------------------------------------------------------------------


def _leaves(messages: Any, path: Path) -> Iterable[tuple[Path, list[str]]]:
    if isinstance(messages, dict):
        for key, inner in messages.items():
            yield from _leaves(inner, path + (key,))
    elif isinstance(messages, list):
        yield path, [str(message) for message in messages]
    else:
        yield path, [str(messages)]


def default_column(path: Path) -> str:
    """The column a field would have, for errors about fields the file has no column for."""
    names = [str(part) for part in path if not isinstance(part, int) and part != "_schema"]
    if not names:
        return "_"
    if names[0] == "plug" and names[1:] == ["sku"]:
        return "sku"
    if names[0] == "head" and names[1:] == ["head_id"]:
        return "head_id"
    if names[0] == "options":
        names = names[1:] or ["options"]
    return "_".join(names)


def errors_by_column(errors: dict[str, Any], columns: Mapping[Path, str]) -> dict[str, list[str]]:
    """Nested field errors (`{"plug": {"reach": [...]}}`) keyed by the CSV's column names."""
    out: dict[str, list[str]] = {}
    for path, messages in _leaves(errors, ()):
        name = None
        for end in range(len(path), 0, -1):
            name = columns.get(path[:end])
            if name is not None:
                break
        out.setdefault(name or default_column(path), []).extend(messages)
    return out
