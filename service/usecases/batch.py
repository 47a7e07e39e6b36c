"""Checking a build list: load every line through the schemas, check it, write its result.

Shared by `POST /v1/fit-checks/batch`, `plugfit validate` and `plugfit check`, so they
give the same answer for the same line. One bad line never spoils the list: it becomes
an `invalid` result with its field errors, and the other lines are still checked.

A batch runs in its caller's process from start to end, in three steps:

1. Resolving (`resolve_references`): every `sku` and `head_id` the lines name, read
   from the lines as they came and looked up in one call of the caller's
   `fetch_references` (the database, or inventory files).
2. Loading (`ItemLoader`): every line through the parts of `BatchItemSchema`. A list
   of 10,000 lines repeats a few dozen heads and a few hundred plugs, and marshmallow
   needs some 70 µs to load a plug, so each distinct plug, head and options document is
   loaded once per batch, through a schema narrowed to the fields it gives.
3. Checking and writing (`Checker`): each distinct (plug, head, options, waivers) is
   checked once and its result document written as JSON once
   (`service.formats.result_json`, orjson); every line's result is kept as its JSON
   text. A long list thus leaves bytes behind rather than millions of small dicts that
   Python's garbage collector would walk again and again.

`ListChecker` does steps 2 and 3 for a list cut into parts, keeping what one part
loaded and checked for the next.

No Flask and no database here (the caller passes `fetch_references`), and no other
process: throughput across cores comes from more processes (web workers, `plugfit
validate --jobs`), each checking whole lists or parts of one.
"""
from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

from marshmallow import Schema, ValidationError, missing

from schemas import field_loader
from schemas.batch import BatchItemSchema
from schemas.specs import options_from
from service.fitment import verdict_of
from service.fitment.catalog import Catalog
from service.fitment.model import FitResult, Options
from service.formats.build_list import RawItem, errors_by_column
from service.formats.result_json import batch_answer_json, batch_item_json, from_json, result_document, to_json
from service.usecases.fit_check import UnknownReference, run_check

FetchReferences = Callable[[set[str], set[str]], tuple[Mapping[str, dict], Mapping[str, dict]]]
# Told how many lines were just loaded or checked (each line counts twice: loaded, then
# checked), so a command line can show how far a long list has come.
Progress = Callable[[int], None]
PROGRESS_EVERY = 250  # lines between two calls of `progress`


def no_progress(lines: int) -> None:
    """For callers that show no progress."""


# --- resolving ----------------------------------------------------------------------------


def resolve_references(raw_items: Iterable[RawItem], fetch_references: FetchReferences
                       ) -> tuple[dict[str, dict], dict[str, dict]]:
    """The stored plugs and heads the lines name, by identifier, from one call of
    `fetch_references` (none when the lines name none). Only what the lines name is
    kept: an inventory file's look-up answers with all it holds, and what is resolved
    here goes to every process of a `plugfit validate --jobs` run."""
    skus, head_ids = _references(raw_items)
    if not (skus or head_ids):
        return {}, {}
    plugs, heads = fetch_references(skus, head_ids)
    return ({sku: plugs[sku] for sku in skus if sku in plugs},
            {head_id: heads[head_id] for head_id in head_ids if head_id in heads})


def _references(raw_items: Iterable[RawItem]) -> tuple[set[str], set[str]]:
    """Every distinct sku and head_id the lines name, read before they are loaded, so a
    list is resolved before it is loaded, in one look-up. A name that the schemas refuse
    is looked up in vain and harmlessly: its line is invalid anyway."""
    skus: set[str] = set()
    head_ids: set[str] = set()
    for raw in raw_items:
        data = raw.data
        if not isinstance(data, dict):
            continue
        plug, head = data.get("plug"), data.get("head")
        if isinstance(plug, dict) and isinstance(plug.get("sku"), str):
            skus.add(plug["sku"])
        if isinstance(head, dict) and isinstance(head.get("head_id"), str):
            head_ids.add(head["head_id"])
    return skus, head_ids


def no_references(skus: set[str], head_ids: set[str]) -> tuple[dict, dict]:
    """For callers with no inventory: every reference is unknown."""
    return {}, {}


# --- loading ------------------------------------------------------------------------------


@dataclass(slots=True)
class LoadedItem:
    position: int
    line: int | None
    ref: str
    request: dict[str, Any]  # {"plug", "head", "options"}, loaded (shared, never mutated)
    waivers: Sequence[dict[str, Any]]
    columns: Mapping[tuple, str] | None = None  # CSV: field path -> column, for errors


@dataclass(slots=True)
class InvalidItem:
    position: int
    line: int | None
    ref: str
    errors: dict[str, Any]


Item = LoadedItem | InvalidItem


@lru_cache(maxsize=1)
def _item_schema() -> BatchItemSchema:
    return BatchItemSchema()


def _schema_for(schema: Schema, document: Any) -> Schema:
    """The schema, narrowed to the fields `document` gives (plus every field with a
    default or marked required).

    marshmallow visits every declared field on each load, present or not; a head port
    declares 26 and a build-list line typically gives 7, so the narrowed schema loads
    three times faster. What it accepts and refuses is the same: undeclared keys stay
    unknown (and are refused), absent fields would have been skipped anyway, defaults
    and required fields are always included, and the schema's own validators run as
    before. One instance per distinct set of fields, kept across batches.
    """
    if not isinstance(document, dict):
        return schema
    declared = schema.fields
    names = frozenset(name for name in document if name in declared) | _always_loaded(schema)
    if not names or len(names) == len(declared):
        return schema
    return _narrowed(type(schema), names)


@lru_cache(maxsize=8)
def _always_loaded_names(schema_class: type[Schema]) -> frozenset[str]:
    schema = schema_class()
    return frozenset(name for name, field in schema.fields.items()
                     if field.required or field.load_default is not missing)


def _always_loaded(schema: Schema) -> frozenset[str]:
    return _always_loaded_names(type(schema))


@lru_cache(maxsize=512)
def _narrowed(schema_class: type[Schema], names: frozenset[str]) -> Schema:
    return schema_class(only=names)


def _key(document: Any) -> str:
    """The exact input text of a sub-document. `repr` tells 1, 1.0, "1" and True apart
    and is four times cheaper than JSON; two spellings of one document only cost a
    second load."""
    return repr(document)


class ItemLoader:
    """Loads raw items through `BatchItemSchema`, each distinct sub-document once."""

    PARTS = ("plug", "head", "options")

    def __init__(self, require: Iterable[str] = ()) -> None:
        schema = _item_schema()
        self._fields = schema.fields
        self._schemas = {name: schema.fields[name].schema for name in self.PARTS}
        self._cache: dict[str, dict[str, tuple[dict | None, Any]]] = {name: {} for name in self.PARTS}
        self._by_identity: dict[tuple[str, int], tuple[Any, tuple[dict | None, Any]]] = {}
        self._require = frozenset(require)
        self._with_require: dict[int, dict] = {}
        self._narrowed: dict[tuple, Schema] = {}

    def _part(self, name: str, document: Any) -> tuple[dict | None, Any]:
        # A CSV list shares one sub-document among the lines that repeat it: found by
        # identity first (the entry keeps the document alive, so its id stays its own).
        shared = self._by_identity.get((name, id(document)))
        if shared is not None and shared[0] is document:
            return shared[1]
        try:
            key = _key(document)
        except RecursionError:
            return None, ["nested too deeply"]
        cache = self._cache[name]
        hit = cache.get(key)
        if hit is not None:
            # Seen before, so likely to come again: by identity next time. A document
            # seen once is not entered (a list of distinct lines would otherwise keep
            # two more objects a line alive for the garbage collector to walk).
            self._by_identity[(name, id(document))] = (document, hit)
            return hit
        try:
            hit = (field_loader.load(self._schema_of(name, document), document), None)
        except ValidationError as exc:
            hit = (None, exc.messages)
        except RecursionError:
            hit = (None, ["nested too deeply"])
        cache[key] = hit
        return hit

    def _schema_of(self, name: str, document: Any) -> Schema:
        """`_schema_for`, remembered by the document's keys in order: the lines of a
        list give the same fields, and working out the narrowed set per line cost a
        few microseconds each."""
        if not isinstance(document, dict):
            return self._schemas[name]
        key = (name, *document)
        schema = self._narrowed.get(key)
        if schema is None:
            schema = self._narrowed[key] = _schema_for(self._schemas[name], document)
        return schema

    def _options(self, loaded: dict) -> dict:
        """Options with the batch-wide `require` added (one dict per distinct options)."""
        if not self._require:
            return loaded
        merged = self._with_require.get(id(loaded))
        if merged is None:
            merged = {**loaded, "require": sorted(self._require.union(loaded.get("require") or ()))}
            self._with_require[id(loaded)] = merged
        return merged

    def load(self, raw: RawItem) -> Item:
        ref = raw.default_ref
        data = raw.data
        if not isinstance(data, dict):
            return self._invalid(raw, ref, {"_schema": ["an item is an object with plug and head"]})
        errors: dict[str, Any] = {}
        unknown = [name for name in data if name not in self._fields]
        for name in unknown:
            errors[name] = ["Unknown field."]
        waivers: Sequence[dict[str, Any]] = ()
        for name in ("ref", "waive", "note"):
            if name not in data:
                continue
            try:  # the item schema's own fields: a Schema.load per line would cost 20 µs
                value = self._fields[name].deserialize(data[name], name, data)
            except ValidationError as exc:
                errors[name] = exc.messages
                continue
            if name == "ref":
                ref = value
            elif name == "waive":
                waivers = value
        request: dict[str, Any] = {}
        for name in self.PARTS:
            if name not in data and self._fields[name].required:
                errors[name] = [self._fields[name].error_messages["required"]]
                continue
            # No options are the empty options: loaded once, one object for every line.
            loaded, messages = self._part(name, data.get(name, {}))
            if messages is not None:
                errors[name] = messages
            else:
                request[name] = loaded
        if errors or raw.cell_errors:
            return self._invalid(raw, ref, errors)
        request["options"] = self._options(request["options"])
        return LoadedItem(raw.position, raw.line, ref, request, waivers, raw.columns)

    @staticmethod
    def _invalid(raw: RawItem, ref: str, errors: dict[str, Any]) -> InvalidItem:
        if raw.columns is not None:  # CSV: report by the columns the user wrote
            by_column = errors_by_column(errors, raw.columns)
            for column, messages in raw.cell_errors.items():
                by_column.setdefault(column, []).extend(messages)
            errors = by_column
        return InvalidItem(raw.position, raw.line, ref, errors)


def load_items(raw_items: Iterable[RawItem], require: Iterable[str] = (),
               progress: Progress = no_progress) -> list[Item]:
    return _loaded(ItemLoader(require), raw_items, progress)


def _loaded(loader: ItemLoader, raw_items: Iterable[RawItem], progress: Progress) -> list[Item]:
    items = []
    for raw in raw_items:
        items.append(loader.load(raw))
        if len(items) % PROGRESS_EVERY == 0:
            progress(PROGRESS_EVERY)
    progress(len(items) % PROGRESS_EVERY)
    return items


# --- checking and writing -----------------------------------------------------------------


def _waived(result: FitResult, document: dict[str, Any], waivers: Sequence[dict[str, Any]]) -> dict[str, Any]:
    """The document with its `waivers` member: each waiver with the findings it moved out
    of `findings`, and the verdict worked out again from what remains. Without waivers,
    the document as it is, with `"waivers": []`."""
    if not waivers:
        return {**document, "waivers": []}
    taken: list[list[dict]] = [[] for _ in waivers]
    kept_findings, kept_documents = [], []
    for finding, finding_document in zip(result.findings, document["findings"], strict=True):
        for index, waiver in enumerate(waivers):
            if finding.code in waiver["codes"]:
                taken[index].append(finding_document)
                break
        else:
            kept_findings.append(finding)
            kept_documents.append(finding_document)
    return {**document, "verdict": verdict_of(kept_findings), "findings": kept_documents,
            "waivers": [{"codes": list(waiver["codes"]), "reason": waiver["reason"], "findings": findings}
                        for waiver, findings in zip(waivers, taken, strict=True)]}


def _waivers_key(waivers: Sequence[dict[str, Any]]) -> tuple:
    return tuple((tuple(waiver["codes"]), waiver["reason"]) for waiver in waivers)


class Checker:
    """Checks loaded items and writes each one's result as JSON; lines that share their
    plug, head, options and waivers are checked and written once.

    Only the JSON is kept, not the engine's results: a list of 10,000 distinct lines
    would otherwise keep some 300,000 objects alive for Python's garbage collector to
    walk on each of its full passes. `plugs` and `heads` hold the stored records the
    items name, by identifier.
    """

    def __init__(self, catalog: Catalog, plugs: Mapping[str, dict], heads: Mapping[str, dict],
                 units: str = "metric") -> None:
        self._catalog = catalog
        self._find_plug, self._find_head = plugs.get, heads.get
        self._units = units
        self._shared: dict[tuple, Any] = {}  # result_document's intern table, for this batch
        # Keyed by the loaded sub-documents' identities (the loader gives equal inputs one
        # object, and the items or the loader keep it alive while this checker is used,
        # so no other object can take its identity) and the waivers: the verdict and the
        # result as JSON.
        self._done: dict[tuple, tuple[str, bytes] | UnknownReference] = {}
        # The engine's Options for each distinct loaded options object (by identity, as
        # above): most lists give every line the same options, made into a record once.
        self._options: dict[int, Options] = {}

    def result(self, item: Item) -> tuple[str, bytes]:
        """The item's verdict and its result in the batch answer, as JSON."""
        own: dict[str, Any] = {"ref": item.ref}
        if item.line is not None:
            own["line"] = item.line
        if isinstance(item, InvalidItem):
            return "invalid", to_json({**own, "verdict": "invalid", "errors": item.errors})
        checked = self._check(item.request, item.waivers)
        if isinstance(checked, UnknownReference):
            errors = checked.errors()
            if item.columns is not None:
                errors = errors_by_column(errors, item.columns)
            return "invalid", to_json({**own, "verdict": "invalid", "errors": errors})
        verdict, document_json = checked
        return verdict, batch_item_json(own, document_json)

    def _check(self, request: dict[str, Any], waivers: Sequence[dict[str, Any]]) -> tuple[str, bytes] | UnknownReference:
        key = (id(request["plug"]), id(request["head"]), id(request["options"]), _waivers_key(waivers))
        checked = self._done.get(key)
        if checked is None:
            try:
                options = self._options.get(id(request["options"]))
                if options is None:
                    options = self._options[id(request["options"])] = options_from(request["options"])
                result = run_check(request, self._catalog, self._find_plug, self._find_head, options)
            except UnknownReference as unknown:
                checked = unknown
            else:
                document = _waived(result, result_document(result, self._units, self._shared), waivers)
                checked = (document["verdict"], to_json(document))
            self._done[key] = checked
        return checked


@dataclass(slots=True)
class BatchAnswer:
    """The batch answer `{"summary": ..., "results": [...]}`, each result kept as the
    JSON text of one line (in input order)."""

    summary: dict[str, Any]
    result_json: list[bytes]

    def to_json(self) -> bytes:
        return batch_answer_json(self.summary, self.result_json)

    @property
    def results(self) -> list[dict[str, Any]]:
        return from_json(b"[" + b",".join(self.result_json) + b"]")

    def as_dict(self) -> dict[str, Any]:
        return {"summary": self.summary, "results": self.results}


def check_items(items: list[Item], catalog: Catalog, plugs: Mapping[str, dict], heads: Mapping[str, dict],
                units: str = "metric", progress: Progress = no_progress) -> BatchAnswer:
    """Check loaded items in order; `plugs` and `heads` hold the stored records the
    items name, by identifier."""
    return _answer(Checker(catalog, plugs, heads, units), items, progress)


def _answer(checker: Checker, items: list[Item], progress: Progress) -> BatchAnswer:
    counts = {"pass": 0, "warn": 0, "fail": 0, "invalid": 0}
    results: list[bytes] = []
    for item in items:
        verdict, result = checker.result(item)
        counts[verdict] += 1
        results.append(result)
        if len(results) % PROGRESS_EVERY == 0:
            progress(PROGRESS_EVERY)
    progress(len(results) % PROGRESS_EVERY)
    return BatchAnswer(summarise(counts), results)


def summarise(counts: Mapping[str, int]) -> dict[str, Any]:
    """Counts and the list's verdict: fail when any item fails or cannot be read."""
    if counts["fail"] or counts["invalid"]:
        verdict = "fail"
    elif counts["warn"]:
        verdict = "warn"
    else:
        verdict = "pass"
    return {"total": sum(counts.values()), "pass": counts["pass"], "warn": counts["warn"],
            "fail": counts["fail"], "invalid": counts["invalid"], "verdict": verdict}


def joined(answers: Iterable[BatchAnswer]) -> BatchAnswer:
    """One answer for a list checked in consecutive parts, in their order."""
    counts = {"pass": 0, "warn": 0, "fail": 0, "invalid": 0}
    results: list[bytes] = []
    for answer in answers:
        for verdict in counts:
            counts[verdict] += answer.summary[verdict]
        results += answer.result_json
    return BatchAnswer(summarise(counts), results)


# --- a whole list -------------------------------------------------------------------------


class ListChecker:
    """Loads and checks lines whose references are resolved (`plugs`, `heads`), part
    after part if need be: what one part loaded and checked serves the next, so a list
    that repeats its plugs and heads loads and checks each once (a process of a
    `plugfit validate --jobs` run keeps one for all the parts it is given). The loader
    keeps every document it loaded for as long as this lives, which keeps the checker's
    keys (their identities) unique."""

    def __init__(self, catalog: Catalog, plugs: Mapping[str, dict], heads: Mapping[str, dict], *,
                 units: str = "metric", require: Iterable[str] = ()) -> None:
        self._loader = ItemLoader(require)
        self._checker = Checker(catalog, plugs, heads, units)

    def check(self, raw_items: list[RawItem], progress: Progress = no_progress) -> BatchAnswer:
        return _answer(self._checker, _loaded(self._loader, raw_items, progress), progress)


def check_list(raw_items: list[RawItem], catalog: Catalog, plugs: Mapping[str, dict], heads: Mapping[str, dict],
               *, units: str = "metric", require: Iterable[str] = (),
               progress: Progress = no_progress) -> BatchAnswer:
    """Load and check lines whose references are already resolved (`plugs`, `heads`)."""
    return ListChecker(catalog, plugs, heads, units=units, require=require).check(raw_items, progress)


def run_batch(raw_items: list[RawItem], catalog: Catalog, fetch_references: FetchReferences = no_references, *,
              units: str = "metric", require: Iterable[str] = (),
              progress: Progress = no_progress) -> BatchAnswer:
    """Resolve the list's references (one `fetch_references` call for all of them),
    then load and check every line."""
    plugs, heads = resolve_references(raw_items, fetch_references)
    return check_list(raw_items, catalog, plugs, heads, units=units, require=require, progress=progress)
