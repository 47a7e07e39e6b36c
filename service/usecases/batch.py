"""Checking a build list: load each item through the schemas, check it, apply waivers.

Shared by `POST /v1/fit-checks/batch` and `plugfit validate`, so both give the same
answer for the same list. One bad item never spoils the batch: it becomes an
`invalid` result with its field errors and the others are still checked.

Why the caches: a build list of 10,000 lines repeats the same few dozen heads and a
few hundred plugs, and marshmallow needs ~70 µs to load a plug and more for a head.
Sub-documents (plug, head, options) are therefore loaded once per distinct input
(keyed by their exact text, or by identity when the CSV reader shares one
sub-document among lines) and a check is run once per distinct (plug, head, options)
triple; the engine is pure, so a repeated check is the same answer. The caches live
for one batch only. A long list whose lines mostly differ cannot profit from them; it
may instead be checked half in a forked helper process (see `_run_split`).

Pure: no Flask, no database. References are looked up through `fetch_references`,
given all distinct skus and head_ids at once, so the caller can use one query each.
"""
from __future__ import annotations

import gc
import json
import os
import pickle
import select
import signal
import threading
import time
from collections.abc import Callable, Iterable, Iterator, Mapping
from contextlib import contextmanager
from dataclasses import dataclass
from functools import lru_cache
from json.encoder import encode_basestring_ascii as _json_string
from typing import Any

from marshmallow import Schema, ValidationError, missing

from schemas.batch import BatchItemSchema
from service.fitment import verdict_of
from service.fitment.catalog import Catalog
from service.fitment.model import FitResult
from service.formats.build_list import RawItem, errors_by_column
from service.formats.result_json import result_document
from service.usecases.fit_check import UnknownReference, run_check

_pause_lock = threading.Lock()
_pauses = 0  # batches running with the collector paused
_collector_was_enabled = False


@contextmanager
def collector_paused() -> Iterator[None]:
    """Pause Python's cyclic garbage collector while a build list is read, checked and
    written.

    Why: a 10,000-line list allocates a few million dicts and lists; the collector
    runs a young-generation pass every 700 allocations and, as the survivors pile up,
    full passes over everything still alive: on a list of distinct lines that was
    about a third of the whole time. The batch makes no
    reference cycles worth collecting (what it drops is freed by reference counting),
    and whatever cyclic garbage arises is collected once the collector is back on.
    Nested and concurrent batches (threads) share one pause: the collector comes back
    when the last one ends, and only if it was on before the first began.
    """
    global _pauses, _collector_was_enabled
    with _pause_lock:
        if _pauses == 0:
            _collector_was_enabled = gc.isenabled()
            gc.disable()
        _pauses += 1
    try:
        yield
    finally:
        with _pause_lock:
            _pauses -= 1
            if _pauses == 0 and _collector_was_enabled:
                gc.enable()


FetchReferences = Callable[[set[str], set[str]], tuple[Mapping[str, dict], Mapping[str, dict]]]


@dataclass(slots=True)
class LoadedItem:
    position: int
    line: int | None
    ref: str
    request: dict[str, Any]  # {"plug", "head", "options"}, loaded (shared, never mutated)
    waivers: list[dict[str, Any]]
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
        if hit is None:
            try:
                hit = (self._schema_of(name, document).load(document), None)
            except ValidationError as exc:
                hit = (None, exc.messages)
            except RecursionError:
                hit = (None, ["nested too deeply"])
            cache[key] = hit
        self._by_identity[(name, id(document))] = (document, hit)
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
        waivers: list[dict[str, Any]] = []
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
            if name not in data:
                if self._fields[name].required:
                    errors[name] = [self._fields[name].error_messages["required"]]
                    continue
                request[name] = {}
                continue
            loaded, messages = self._part(name, data[name])
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


def load_items(raw_items: Iterable[RawItem], require: Iterable[str] = ()) -> list[Item]:
    loader = ItemLoader(require)
    return [loader.load(raw) for raw in raw_items]


def references(items: Iterable[Item]) -> tuple[set[str], set[str]]:
    """Every distinct sku and head_id the loaded items name."""
    skus: set[str] = set()
    head_ids: set[str] = set()
    for item in items:
        if isinstance(item, LoadedItem):
            if "sku" in item.request["plug"]:
                skus.add(item.request["plug"]["sku"])
            if "head_id" in item.request["head"]:
                head_ids.add(item.request["head"]["head_id"])
    return skus, head_ids


def no_references(skus: set[str], head_ids: set[str]) -> tuple[dict, dict]:
    """For callers with no inventory: every reference is unknown."""
    return {}, {}


# --- checking ---------------------------------------------------------------------------


def _waive(result: FitResult, document: dict[str, Any], waivers: list[dict[str, Any]]) -> dict[str, Any]:
    """The document with waived findings moved out of `findings` into `waivers` and the
    verdict recomputed from what remains."""
    taken: list[list[dict]] = [[] for _ in waivers]
    kept_findings, kept_documents = [], []
    for finding, finding_document in zip(result.findings, document["findings"], strict=False):
        for index, waiver in enumerate(waivers):
            if finding.code in waiver["codes"]:
                taken[index].append(finding_document)
                break
        else:
            kept_findings.append(finding)
            kept_documents.append(finding_document)
    waived = dict(document)
    waived["verdict"] = verdict_of(kept_findings)
    waived["findings"] = kept_documents
    waived["waivers"] = [{"codes": list(waiver["codes"]), "reason": waiver["reason"], "findings": findings}
                         for waiver, findings in zip(waivers, taken, strict=False)]
    return waived


def _own_members(item: Item) -> dict[str, Any]:
    members: dict[str, Any] = {"ref": item.ref}
    if item.line is not None:
        members["line"] = item.line
    return members


Entry = tuple[dict[str, Any], dict[str, Any] | None]


@dataclass(slots=True)
class _Segment:
    """Consecutive results: as entries, or (checked by a helper process, see
    `_run_split`) as their JSON text, or both."""

    entries: list[Entry] | None
    json_text: str | None = None


class BatchAnswer:
    """The batch answer `{"summary": ..., "results": [...]}`.

    Items with the same plug, head and options share one result document; it is kept
    shared (not copied into every result) until someone asks for `results`, so the JSON
    writer encodes each distinct document once.
    """

    __slots__ = ("_results", "_segments", "summary")

    def __init__(self, summary: dict[str, Any], entries: list[Entry] | None = None, *,
                 segments: list[_Segment] | None = None) -> None:
        self.summary = summary
        # (the item's own members, the shared result document or None when the own
        # members are the whole result: invalid items and items with waivers)
        self._segments = segments if segments is not None else [_Segment(entries or [])]
        self._results: list[dict[str, Any]] | None = None

    @property
    def results(self) -> list[dict[str, Any]]:
        if self._results is None:
            results: list[dict[str, Any]] = []
            for segment in self._segments:
                if segment.entries is None:  # only its JSON came back: read it
                    results.extend(json.loads("[" + segment.json_text + "]") if segment.json_text else [])
                    continue
                results.extend(own if document is None else {**own, **document, "waivers": []}
                               for own, document in segment.entries)
            self._results = results
        return self._results

    def as_dict(self) -> dict[str, Any]:
        return {"summary": self.summary, "results": self.results}

    def to_json(self) -> str:
        """Compact JSON, equal to `json.dumps(self.as_dict())` read back."""
        encode = json.JSONEncoder(separators=(",", ":")).encode
        parts = ['{"summary":', encode(self.summary), ',"results":[']
        for segment in self._segments:
            if segment.json_text is not None:
                if segment.json_text:
                    parts += (",", segment.json_text) if len(parts) > 3 else (segment.json_text,)
            elif segment.entries:
                if len(parts) > 3:
                    parts.append(",")
                _write_entries(segment.entries, parts)
        parts.append("]}")
        return "".join(parts)  # one copy of the tens of megabytes, not one per concatenation


def _entries_json(entries: list[Entry]) -> str:
    """The results of `entries` as JSON, without the enclosing brackets."""
    parts: list[str] = []
    _write_entries(entries, parts)
    return "".join(parts)


def _write_entries(entries: list[Entry], parts: list[str]) -> None:
    """Append the JSON of `entries`' results, comma-separated, to `parts`: pieces joined
    once by the caller, since concatenating a 4 kB document per line copied it over and
    over.

    Without the encoder's cycle check (10 % of the writing time on long lists): the
    documents are trees built by `result_document` and the checker, never cyclic."""
    encode = json.JSONEncoder(separators=(",", ":"), check_circular=False).encode
    encoded: dict[int, str] = {}
    append = parts.append
    first = True
    for own, document in entries:
        if not first:
            append(",")
        first = False
        if document is None:
            append(encode(own))
            continue
        body = encoded.get(id(document))
        if body is None:
            body = encoded[id(document)] = encode(document)[1:-1]
        # The own members of a checked item are its ref (a string) and, for CSV, its
        # line (an int): written directly, a JSONEncoder call per item costs more.
        append('{"ref":')
        append(_json_string(own["ref"]))
        if "line" in own:
            append(',"line":')
            append(str(int(own["line"])))
        append(",")
        append(body)
        append(',"waivers":[]}')


def check_items(items: list[Item], catalog: Catalog, plugs: Mapping[str, dict], heads: Mapping[str, dict],
                units: str = "metric") -> BatchAnswer:
    """Check loaded items in order; `plugs` and `heads` hold the stored records the items
    reference, by identifier."""
    counts, entries = _check(items, catalog, plugs, heads, units)
    return BatchAnswer(summarise(counts), entries)


def _check(items: list[Item], catalog: Catalog, plugs: Mapping[str, dict], heads: Mapping[str, dict],
           units: str) -> tuple[dict[str, int], list[Entry]]:
    find_plug, find_head = plugs.get, heads.get
    memo: dict[tuple[int, int, int], tuple[FitResult, dict] | UnknownReference] = {}
    shared: dict[tuple, Any] = {}  # result_document's intern table, for this batch
    entries: list[Entry] = []
    counts = {"pass": 0, "warn": 0, "fail": 0, "invalid": 0}
    for item in items:
        own = _own_members(item)
        if isinstance(item, InvalidItem):
            own["verdict"] = "invalid"
            own["errors"] = item.errors
            counts["invalid"] += 1
            entries.append((own, None))
            continue
        request = item.request
        key = (id(request["plug"]), id(request["head"]), id(request["options"]))
        outcome = memo.get(key)
        if outcome is None:
            try:
                result = run_check(request, catalog, find_plug, find_head)
                outcome = (result, result_document(result, units, shared))
            except UnknownReference as unknown:
                outcome = unknown
            memo[key] = outcome
        if isinstance(outcome, UnknownReference):
            errors = outcome.errors()
            own["verdict"] = "invalid"
            own["errors"] = errors if item.columns is None else errors_by_column(errors, item.columns)
            counts["invalid"] += 1
            entries.append((own, None))
            continue
        result, document = outcome
        if item.waivers:
            own.update(_waive(result, document, item.waivers))
            counts[own["verdict"]] += 1
            entries.append((own, None))
        else:
            counts[document["verdict"]] += 1
            entries.append((own, document))
    return counts, entries


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


def run_batch(raw_items: list[RawItem], catalog: Catalog, fetch_references: FetchReferences = no_references, *,
              units: str = "metric", require: Iterable[str] = (), split: bool = False,
              json_only: bool = False) -> BatchAnswer:
    """Load, resolve (one `fetch_references` call for all identifiers) and check.

    `split`: a long list without references may be checked half here and half in a
    helper process (see `_run_split`); the answer is the same. `json_only`: the caller
    only wants `to_json()` (the helper then sends JSON alone, and `results` would
    have to read it back).
    """
    if split and len(raw_items) >= MIN_ITEMS_TO_SPLIT and helpers_available() \
            and not _names_references(raw_items) and _mostly_distinct(raw_items):
        answer = _run_split(raw_items, catalog, units, tuple(require), json_only)
        if answer is not None:
            return answer
    items = load_items(raw_items, require)
    skus, head_ids = references(items)
    plugs, heads = fetch_references(skus, head_ids) if (skus or head_ids) else ({}, {})
    return check_items(items, catalog, plugs, heads, units)


# --- a long list over two cores -----------------------------------------------------------
#
# Why: every distinct line costs about 150 µs of schema loading, checking and writing, so
# a 10,000-line list of distinct lines takes seconds on one core; the machine has two.
# A forked helper checks the second half of the list while this process checks the
# first. It needs no database (lists that name a sku or head_id are never split) and
# nothing else the fork shares: it computes, sends its results down a pipe and leaves
# with os._exit (no atexit handlers, no flushing of the parent's buffers, no closing of
# the parent's connections). If anything goes wrong - no fork, a helper that dies,
# sends garbage or takes too long - its half is checked here, so the answer is always
# the same as without the helper.

MIN_ITEMS_TO_SPLIT = 2_000  # below this the fork (a few ms) is not worth it
OUR_SHARE_PERCENT = 50  # of the lines, checked in this process; the helper takes the rest
HELPER_GRACE_S = 5.0  # how long past twice our own half's time a helper may take


def helpers_available() -> bool:
    """Whether a batch may fork a helper: POSIX fork, two cores for this process, and
    a single-threaded process (forking while another thread holds a lock could leave
    the helper waiting on it forever; gunicorn's sync workers and the CLI are single
    threaded, threaded servers simply check on one core)."""
    if not hasattr(os, "fork") or threading.active_count() != 1:
        return False
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)
    return cores >= 2


def _names_references(raw_items: list[RawItem]) -> bool:
    """Whether any item may name a sku or head_id (resolved from the database, which a
    helper must not touch)."""
    for raw in raw_items:
        data = raw.data
        if not isinstance(data, dict):
            continue
        plug, head = data.get("plug"), data.get("head")
        if (isinstance(plug, dict) and "sku" in plug) or (isinstance(head, dict) and "head_id" in head):
            return True
    return False


def _mostly_distinct(raw_items: list[RawItem], samples: int = 256) -> bool:
    """Whether most plugs and heads in the list differ from line to line, judged on
    `samples` lines spread over it.

    Why: a list that repeats its plugs and heads is cheap already (each distinct one is
    loaded, checked and written once); split in two, both halves would load and write
    most of them again and the answer comes no sooner (measured: 10,000 lines of 120
    plugs and 40 heads, 0.39 s in one process, 0.43 s in two).
    """
    step = max(1, len(raw_items) // samples)
    plugs, heads, seen = set(), set(), 0
    for raw in raw_items[::step]:
        data = raw.data
        if isinstance(data, dict):
            plugs.add(_sample_key(data.get("plug")))
            heads.add(_sample_key(data.get("head")))
            seen += 1
    return seen > 0 and len(plugs) + len(heads) > seen


def _sample_key(document: Any) -> str:
    try:
        return repr(document)
    except RecursionError:
        return ""


def _check_part(raw_items: list[RawItem], catalog: Catalog, units: str,
                require: tuple[str, ...]) -> tuple[dict[str, int], list[Entry]]:
    return _check(load_items(raw_items, require), catalog, {}, {}, units)


def _run_split(raw_items: list[RawItem], catalog: Catalog, units: str, require: tuple[str, ...],
               json_only: bool) -> BatchAnswer | None:
    """The list checked in two halves, the second by a forked helper; None when no
    helper could be started (the caller then checks the list itself)."""
    # Half each: this process still joins the answers afterwards, but the helper pays
    # for copying the pages it touches (measured: 47 to 56 % here all within noise).
    ours_count = len(raw_items) * OUR_SHARE_PERCENT // 100
    ours, theirs = raw_items[:ours_count], raw_items[ours_count:]
    try:
        read_end, write_end = os.pipe()
    except OSError:
        return None
    _widen(write_end)
    try:
        pid = os.fork()
    except OSError:
        os.close(read_end)
        os.close(write_end)
        return None
    if pid == 0:  # the helper: never returns
        _helper(read_end, write_end, theirs, catalog, units, require, json_only)
    os.close(write_end)
    payload = None
    try:
        started = time.monotonic()
        our_entries: list[Entry] | None
        our_counts, our_entries = _check_part(ours, catalog, units, require)
        our_json = None
        if json_only:
            our_json = _entries_json(our_entries)
            our_entries = None  # freed now, while the helper finishes: only the JSON is wanted
        deadline = time.monotonic() + HELPER_GRACE_S + 2 * (time.monotonic() - started)
        payload = _receive(read_end, deadline)
    finally:
        os.close(read_end)
        _reap(pid, finished=payload is not None)
    if payload is None:  # the helper failed: its half is checked here
        their_counts, their_entries = _check_part(theirs, catalog, units, require)
        payload = (their_counts, None, their_entries)
    their_counts, their_json, their_entries = payload
    counts = {name: our_counts[name] + their_counts[name] for name in our_counts}
    return BatchAnswer(summarise(counts), segments=[_Segment(our_entries, our_json),
                                                    _Segment(their_entries, their_json)])


def _helper(read_end: int, write_end: int, raw_items: list[RawItem], catalog: Catalog, units: str,
            require: tuple[str, ...], json_only: bool) -> None:
    status = 1
    try:
        os.close(read_end)
        signal.signal(signal.SIGINT, signal.SIG_DFL)  # Ctrl-C ends the helper with the CLI
        counts, entries = _check_part(raw_items, catalog, units, require)
        payload = (counts, _entries_json(entries), None) if json_only else (counts, None, entries)
        data = pickle.dumps(payload, protocol=pickle.HIGHEST_PROTOCOL)
        with os.fdopen(write_end, "wb") as out:
            out.write(data)
        status = 0
    finally:
        os._exit(status)


def _widen(pipe_end: int) -> None:
    """A 1 MiB pipe instead of 64 KiB where Linux allows it: the helper's tens of
    megabytes then cross in fewer, larger reads."""
    try:
        import fcntl

        fcntl.fcntl(pipe_end, fcntl.F_SETPIPE_SZ, 1 << 20)
    except (ImportError, AttributeError, OSError):
        pass  # another system, or a lower limit: the default size works, a little slower


def _receive(read_end: int, deadline: float) -> tuple[dict[str, int], str | None, list[Entry] | None] | None:
    """The helper's payload, or None if it ends without a whole one or misses the deadline."""
    chunks = []
    while True:
        remaining = deadline - time.monotonic()
        if remaining <= 0:
            return None
        ready, _, _ = select.select([read_end], [], [], remaining)
        if not ready:
            return None
        chunk = os.read(read_end, 1 << 20)
        if not chunk:
            break
        chunks.append(chunk)
    try:
        payload = pickle.loads(b"".join(chunks))
    except Exception:  # noqa: BLE001 - a helper that died mid-write: its half is checked here
        return None
    if not (isinstance(payload, tuple) and len(payload) == 3 and isinstance(payload[0], dict)):
        return None
    return payload


def _reap(pid: int, finished: bool) -> None:
    """Wait for the helper; one that has not sent its payload is killed first, so no
    helper outlives its batch."""
    if not finished:
        try:
            os.kill(pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
    try:
        os.waitpid(pid, 0)
    except ChildProcessError:  # already reaped (a SIGCHLD handler elsewhere)
        pass
