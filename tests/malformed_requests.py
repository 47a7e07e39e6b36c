"""Malformed requests for every operation of the OpenAPI document, made from a seed.

`generate(document, seed, count)` takes each operation's documented request (its body
example, its parameters, a real identifier of the demo shop in the path) and spoils one
thing: a field's value (hostile unit strings, numbers of thousands of digits, wrong
types, huge strings), the whole body (cut short, a byte order mark, bytes that are not
UTF-8, nesting ten thousand deep, another content type), a CSV cell, a query parameter,
the path, a header, the method, or the HTTP framing itself. `send()` writes the bytes on
a raw socket, so a request no HTTP library would send is sent as written.

Requests that the HTTP server (gunicorn) refuses before the application sees them are
marked `server_own`; docs/operations.md lists them and the answers they get. Requests
whose refusal another issue is fixing are marked with that issue in `owner`.
"""
from __future__ import annotations

import csv
import json
import random
import socket
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any
from urllib.parse import quote

DEMO = Path(__file__).resolve().parent.parent / "seed_catalog" / "demo"


def _demo_identifiers(file_name: str) -> list[str]:
    """The first identifiers of a demo shop file (invented data; comment lines start with #)."""
    lines = [line for line in (DEMO / file_name).read_text(encoding="utf-8").splitlines() if not line.startswith("#")]
    return [row[0] for row in csv.reader(lines[1:3])]


SKU, DELETED_SKU = _demo_identifiers("plugs.csv")
HEAD_ID, DELETED_HEAD_ID = _demo_identifiers("heads.csv")
# DELETEs remove other records, so the ones above stay for every other request.
DELETED = {SKU: DELETED_SKU, HEAD_ID: DELETED_HEAD_ID}

# What a quantity field may be sent as text: issue 12's reproductions, the grammar's
# edges and plain junk.
HOSTILE_QUANTITIES = [
    "9**9**8 mm", "9**9**7 mm", "(19 mm)**1000", "10**10000 mm", "2**2**20 mm", "9**99**9 in", "19 mm**9999",
    "1" + "0" * 5000 + " mm", "19 mm" + " " * 200, " " * 64 + "19", "1 1/4 in", "3/4", "1/0 in", "0/0 mm",
    "NaN mm", "inf", "-Infinity", "1e309 mm", "1e308 in", "-0", "19 ft-lb-ft-lb", "19 mm-mm", "(((((19 mm)))))",
    "19\x00mm", "\x00", "\u0661\u0669 mm", "\uff11\uff19 mm", "19 \u339c", "19 mm\u202e", "\ud7ff", "💥 mm",
    "19 µm", "19 μm", "45 °C", "45 deg C", "18 lbs.ft", "25 N m", "1 in**2/in", "19 mm²", "1_000 mm", "0x13 mm",
    "19 kg", "19 mm; DROP TABLE plugs", "=HYPERLINK(\"http://example.invalid\")", "{}", "[]", "%s%s%n", "\\",
    "19 " + "m" * 60, "1e-400 mm", "-19 mm", "19 parsec", "19 mm / 0", "1 __class__", "19 mm.__dict__",
    "15 psig", "2.5 bara", "1.5 bar (gauge)", " " * 3000 + "1 bar gauge", "1" + " " * 3000 + "x",
    "M14" + " " * 20_000 + "y", "1" + " " * 3000 + "± x",
]
# JSON numbers written as raw text (the standard encoder will not even write the first).
HUGE_NUMBERS = [
    "1" + "0" * 5000, "-" + "9" * 5001, "1" + "0" * 400, "1e99999", "-1e99999", "0." + "0" * 5000 + "1",
    "123456789012345678901234567890", "1E-400", "9" * 4300, "1.5e308",
]
ODD_VALUES: list[Any] = [
    None, True, False, [], {}, "", " ", "x" * 100_000, -1, 0, -0.0, 1e308, 2 ** 63, -(2 ** 63) - 1,
    {"value": "9**9**8 mm"}, {"value": 19, "unit": "9**9**8 mm"}, {"value": 19, "unit": "x" * 70},
    {"value": 19, "unit": "mm", "tol": 1e308}, {"value": 19, "plus": -1}, {"value": [19]}, {"unit": "mm"},
    [[[[[[[[[[[[1]]]]]]]]]]]], {"a": {"b": {"c": {}}}}, "\u0000", "\ud800", ["M14x1.25"] * 1000,
]
CONTENT_TYPES = ["text/plain", "application/x-www-form-urlencoded", "multipart/form-data", "application/xml",
                 "application/json; charset=utf-16", "application/json; charset=latin-1", "application/merge-patch+json",
                 "text/csv", "application/x-ndjson", "", "application/json, text/csv", "*/*", "application/\x7f"]
QUERY_VALUES = ["1" + "0" * 5000, "-1", "0", "1.5", "abc", "", "%00", "%zz", "%", "%ff%fe", "true%00", "x" * 3000,
                "9**9**8 mm", "10**10000 mm", "1e999", "NaN", "ünïcode", "piston,,valve", "a" * 201, "+", "[]"]
PATH_IDS = ["x" * 65, "%00", "%2F", "..", "%2e%2e", "a%20b", "%C3%BC", "%ff", "A" * 3000, "-leading", ".", "sku%00x",
            "%E2%80%AE", "%F0%9F%92%A5", "DEMO-10F-127-FR10%0D%0ASet-Cookie:%20x", "*", "%25"]
HEADERS: list[tuple[str, str]] = [
    ("If-Match", "garbage"), ("If-Match", '"x"'), ("If-Match", "*"), ("If-Match", 'W/"x"'), ("If-Match", "x" * 5000),
    ("If-None-Match", '"x"'), ("Authorization", "Bearer " + "x" * 5000), ("Authorization", "Bearer"),
    ("Authorization", "Basic Zm9vOmJhcg=="), ("Authorization", "Bearer pfk_\xe9\xe9"), ("Authorization", ""),
    ("Accept", "application/xml"), ("Accept", "text/csv;q=x"), ("Accept-Encoding", "gzip;q=nan"),
    ("Content-Encoding", "gzip"), ("Range", "bytes=0-1"), ("Expect", "100-continue"), ("X-Forwarded-For", "x" * 4000),
    ("Cookie", "a=" + "b" * 4000), ("Host", "x" * 300), ("Transfer-Encoding", "gzip"),
]


# Each refusal gunicorn makes itself, and the words docs/operations.md lists it with.
SERVER_OWN_IN_DOCS = {
    "request line over 8,190 bytes": "a request line over 8,190 bytes",
    "a space in the path": "a space or other character not allowed in the path",
    "Content-Length: -1": "`-1`",
    "Content-Length: abc": "`abc`",
    "two Content-Length headers": "given twice",
    "101 header fields": "more than 100 header fields",
    "a header over 8,190 bytes": "one over 8,190 bytes",
    "a bad header name": "a header name with characters not allowed in it",
    "a lower-case method": "a method that is not an upper-case token",
    "HTTP/2.0 on HTTP/1 framing": "an HTTP version other than 1.0/1.1",
    "chunked and Content-Length": "together with `Transfer-Encoding: chunked`",
}


@dataclass
class Case:
    operation: str                       # "POST /v1/fit-checks"
    mutation: str                        # what was spoiled, for the report
    method: bytes
    target: bytes                        # path and query, as sent
    headers: list[tuple[bytes, bytes]] = field(default_factory=list)
    body: bytes = b""
    server_own: bool = False             # gunicorn refuses it before the app
    owner: str | None = None             # another issue fixes its answer
    framed: bool = False                 # the headers carry their own Content-Length/Transfer-Encoding

    def describe(self) -> str:
        return f"{self.operation} [{self.mutation}] {self.target[:120]!r}"


@dataclass
class Answer:
    status: int
    content_type: str
    body: bytes
    elapsed: float


@dataclass
class Operation:
    method: str
    path: str                            # with the demo shop's identifiers filled in
    query: dict[str, str]
    params: list[str]                    # documented query parameters
    bodies: dict[str, Any]               # content type -> example (JSON value or text)
    auth: bool

    @property
    def name(self) -> str:
        return f"{self.method} {self.path}"


def operations(document: dict) -> list[Operation]:
    """Every operation of the OpenAPI document with a valid request to start from."""
    found = []
    for path, item in document["paths"].items():
        for method, operation in item.items():
            if method not in ("get", "post", "put", "delete", "patch"):
                continue
            bodies = {}
            for media_type, content in operation.get("requestBody", {}).get("content", {}).items():
                example = content.get("example")
                if example is None and content.get("examples"):
                    example = next(iter(content["examples"].values()))["value"]
                bodies[media_type] = example if example is not None else {}
            params = [p["name"] for p in operation.get("parameters", []) if isinstance(p, dict) and p.get("in") == "query"]
            concrete = path.replace("{sku}", SKU).replace("{head_id}", HEAD_ID)
            if method == "delete":
                concrete = concrete.replace(SKU, DELETED[SKU]).replace(HEAD_ID, DELETED[HEAD_ID])
            for body in bodies.values():  # a replacement names the record it replaces
                if isinstance(body, dict) and method == "put":
                    body.update({key: value for key, value in (("sku", SKU), ("head_id", HEAD_ID)) if key in body})
            found.append(Operation(method.upper(), concrete, {}, params, bodies, bool(operation.get("security"))))
    return found


# --- the mutations -----------------------------------------------------------------------


def _leaf_paths(value: Any, path: tuple = ()) -> Iterator[tuple]:
    if path:
        yield path
    if isinstance(value, dict):
        for key, inner in value.items():
            yield from _leaf_paths(inner, path + (key,))
    elif isinstance(value, list):
        for index, inner in enumerate(value[:3]):
            yield from _leaf_paths(inner, path + (index,))


def _replaced(document: Any, path: tuple, value: Any) -> Any:
    copy = json.loads(json.dumps(document))
    holder = copy
    for part in path[:-1]:
        holder = holder[part]
    holder[path[-1]] = value
    return copy


_RAW = "\u0000raw\u0000"


def _encode(value: Any, raw: str | None = None) -> bytes:
    text = json.dumps(value, ensure_ascii=False)
    if raw is not None:
        text = text.replace(json.dumps(_RAW), raw)
    return text.encode("utf-8", "surrogatepass")


def _target(operation: Operation, query: list[tuple[str, str]] | None = None, raw_query: str = "") -> bytes:
    parts = [f"{quote(name, safe='')}={quote(value, safe='')}" for name, value in (query or [])]
    if raw_query:
        parts.append(raw_query)
    return (operation.path + ("?" + "&".join(parts) if parts else "")).encode("utf-8")


class Generator:
    def __init__(self, document: dict, seed: int, auth: str) -> None:
        self.rng = random.Random(seed)
        self.operations = operations(document)
        self.auth = auth

    def _headers(self, operation: Operation, content_type: str | None) -> list[tuple[bytes, bytes]]:
        headers = []
        if content_type is not None:
            headers.append((b"Content-Type", content_type.encode("latin-1")))
        if operation.auth or self.rng.random() < 0.3:
            headers.append((b"Authorization", f"Bearer {self.auth}".encode()))
        return headers

    def _body(self, operation: Operation) -> tuple[str | None, Any]:
        if not operation.bodies:
            return None, None
        media_type = self.rng.choice(sorted(operation.bodies))
        return media_type, operation.bodies[media_type]

    def case(self) -> Case:
        operation = self.rng.choice(self.operations)
        mutators: list[tuple[float, Callable[[Operation], Case]]] = [
            (0.30, self.spoil_a_field), (0.14, self.spoil_the_body), (0.16, self.spoil_the_query),
            (0.10, self.spoil_the_path), (0.12, self.spoil_a_header), (0.04, self.spoil_the_method),
            (0.04, self.spoil_the_framing), (0.10, self.spoil_a_cell),
        ]
        pick = self.rng.random() * sum(weight for weight, _ in mutators)
        for weight, mutator in mutators:
            pick -= weight
            if pick <= 0:
                return mutator(operation)
        return mutators[-1][1](operation)

    def _case(self, operation: Operation, mutation: str, *, media_type: str | None = None, body: bytes = b"",
              target: bytes | None = None, **kw: Any) -> Case:
        return Case(operation.name, mutation, operation.method.encode(), target or _target(operation),
                    kw.pop("headers", None) or self._headers(operation, media_type), body, **kw)

    # A JSON field (or a JSON-lines record's field) gets a hostile value.
    def spoil_a_field(self, operation: Operation) -> Case:
        media_type, example = self._body(operation)
        if media_type is None or isinstance(example, str) and "json" not in media_type:
            return self.spoil_the_query(operation)
        record = json.loads(example.splitlines()[0]) if isinstance(example, str) else example
        paths = list(_leaf_paths(record))
        if not paths:
            return self.spoil_the_body(operation)
        path = self.rng.choice(paths)
        roll = self.rng.random()
        raw = None
        if roll < 0.45:
            value: Any = self.rng.choice(HOSTILE_QUANTITIES)
        elif roll < 0.70:
            value, raw = _RAW, self.rng.choice(HUGE_NUMBERS)
        else:
            value = self.rng.choice(ODD_VALUES)
        body = _encode(_replaced(record, path, value), raw)
        if isinstance(example, str):  # JSON lines: one spoiled record among good ones
            body = example.encode() + body + b"\n"
        shown = raw[:20] if raw else repr(value)[:40]
        return self._case(operation, f"field {'.'.join(map(str, path))} = {shown}", media_type=media_type, body=body)

    # The body as a whole: cut short, prefixed, not UTF-8, nested deep, another type.
    def spoil_the_body(self, operation: Operation) -> Case:
        media_type, example = self._body(operation)
        media_type = media_type or "application/json"
        good = example.encode() if isinstance(example, str) else _encode(example if example is not None else {})
        choices: list[tuple[str, bytes]] = [  # (what, body)
            ("cut short", good[: self.rng.randrange(max(1, len(good)))]),
            ("byte order mark", b"\xef\xbb\xbf" + good),
            ("not UTF-8", good[:5] + b"\xff\xfe\xc3\x28" + good[5:]),
            ("empty", b""),
            ("only a byte order mark", b"\xef\xbb\xbf"),
            ("null", b"null"), ("a list", b"[]"), ("a string", b'"plug"'),
            ("NaN literal", b'{"plug": NaN, "head": Infinity}'),
            ("nested 10,000 deep", b"[" * 10_000 + b"]" * 10_000),
            ("objects nested 10,000 deep", b'{"a":' * 10_000 + b"1" + b"}" * 10_000),
            ("1 MiB of white space", good + b" " * (1 << 20)),
            ("duplicate keys", b'{"items": [], "items": [], "plug": 1, "plug": 2}'),
            ("UTF-16", json.dumps(example).encode("utf-16") if example is not None else b"\xff\xfe"),
            ("a NUL byte", good[:3] + b"\x00" + good[3:]),
        ]
        mutation, body = self.rng.choice(choices)
        if self.rng.random() < 0.25:
            media_type = self.rng.choice(CONTENT_TYPES)
            mutation += f" as {media_type!r}"
        return self._case(operation, f"body {mutation}", media_type=media_type, body=body)

    # One CSV cell (batch and import bodies) gets a hostile value.
    def spoil_a_cell(self, operation: Operation) -> Case:
        csv_text = operation.bodies.get("text/csv")
        if not isinstance(csv_text, str):
            return self.spoil_a_field(operation)
        lines = csv_text.splitlines()
        header, rows = lines[0], lines[1:] or [""]
        row_index = self.rng.randrange(len(rows))
        cells = rows[row_index].split(",")
        column = self.rng.randrange(len(cells))
        owner = None
        roll = self.rng.random()
        if roll < 0.5:
            value = self.rng.choice(HOSTILE_QUANTITIES)
        elif roll < 0.6:
            value = "x" * 200_000
        elif roll < 0.7:
            value = self.rng.choice(HUGE_NUMBERS)
        else:
            value = self.rng.choice(['"unclosed', 'a"b', "\x00", "=1+1", "@SUM(A1)", "\r", "\t-1", "ü" * 50,
                                     ",,,,,,,,,,,,,,,,,,,,", "\ufeff19", "19\u00a0mm", "\u2212" + "5"])
        cells[column] = value if '"' in value or value.startswith(("\r", "\t")) else f'"{value}"'
        rows[row_index] = ",".join(cells)
        body = "\n".join([header, *rows]) + "\n"
        if self.rng.random() < 0.2:
            body = self.rng.choice(["\ufeff" + body, body.replace("\n", "\r"), body.replace("\n", "\r\n"),
                                    header + "," + ",".join(["extra"] * 500) + "\n" + "\n".join(rows)])
        return self._case(operation, f"CSV cell {column} of row {row_index + 1} = {value[:30]!r}", media_type="text/csv",
                          body=body.encode("utf-8", "surrogatepass"), owner=owner)

    def spoil_the_query(self, operation: Operation) -> Case:
        names = operation.params + ["page", "page_size", "unknown", "units"]
        name = self.rng.choice(names)
        value = self.rng.choice(QUERY_VALUES + HOSTILE_QUANTITIES[:8])
        media_type, example = self._body(operation)
        body = b"" if media_type is None else (example.encode() if isinstance(example, str) else _encode(example))
        if value.startswith("%") or value.endswith("%00"):  # sent as written: a broken escape
            target = _target(operation, raw_query=f"{name}={value}")
        else:
            query = [(name, value)] + ([(name, "1")] if self.rng.random() < 0.2 else [])
            target = _target(operation, query)
        return self._case(operation, f"query {name}={value[:30]!r}", media_type=media_type, body=body, target=target)

    def spoil_the_path(self, operation: Operation) -> Case:
        roll = self.rng.random()
        path = operation.path
        identifiers = [SKU, HEAD_ID, *DELETED.values()]
        if roll < 0.6 and any(identifier in path for identifier in identifiers):
            bad = self.rng.choice(PATH_IDS)
            for identifier in identifiers:
                path = path.replace(identifier, bad)
        else:
            path = self.rng.choice([path.replace("/", "//"), path + "/", path.upper(), path + "/unknown",
                                    path.replace("/v1", "/v1/.."), path.replace("/v1", "/v2"), path + "%2F",
                                    path + ";x=1", path + "#frag", path + "\x00", path + "%00"])
        media_type, example = self._body(operation)
        body = b"" if media_type is None else (example.encode() if isinstance(example, str) else _encode(example))
        return self._case(operation, f"path {path[:60]!r}", media_type=media_type, body=body,
                          target=path.encode("utf-8"))

    def spoil_a_header(self, operation: Operation) -> Case:
        media_type, example = self._body(operation)
        body = b"" if media_type is None else (example.encode() if isinstance(example, str) else _encode(example))
        name, value = self.rng.choice(HEADERS)
        headers = [(key, val) for key, val in self._headers(operation, media_type)
                   if key.decode().lower() != name.lower()]
        headers.append((name.encode(), value.encode("latin-1")))
        return self._case(operation, f"header {name}: {value[:30]!r}", media_type=media_type, body=body,
                          headers=headers)

    def spoil_the_method(self, operation: Operation) -> Case:
        method = self.rng.choice(["PATCH", "TRACE", "OPTIONS", "PUT", "DELETE", "POST", "GET", "PROPFIND"])
        case = self._case(operation, f"method {method}")
        case.method = method.encode()
        return case

    # What gunicorn refuses itself (docs/operations.md, "Answers from the HTTP server").
    def spoil_the_framing(self, operation: Operation) -> Case:
        path = operation.path.encode()
        kinds: list[tuple[str, Callable[[Case], None]]] = [
            ("request line over 8,190 bytes", lambda c: setattr(c, "target", path + b"?q=" + b"x" * 8200)),
            ("a space in the path", lambda c: setattr(c, "target", path + b"/a b")),
            ("Content-Length: -1", lambda c: c.headers.append((b"Content-Length", b"-1"))),
            ("Content-Length: abc", lambda c: c.headers.append((b"Content-Length", b"abc"))),
            ("two Content-Length headers", lambda c: c.headers.extend([(b"Content-Length", b"0"),
                                                                        (b"Content-Length", b"1")])),
            ("101 header fields", lambda c: c.headers.extend((f"X-H{n}".encode(), b"1") for n in range(101))),
            ("a header over 8,190 bytes", lambda c: c.headers.append((b"X-Long", b"x" * 8300))),
            ("a bad header name", lambda c: c.headers.append((b"Bad Name", b"1"))),
            ("a lower-case method", lambda c: setattr(c, "method", c.method.lower())),
            ("HTTP/2.0 on HTTP/1 framing", lambda c: setattr(c, "target", path + b" HTTP/2.0\r\nX:")),
            ("chunked and Content-Length", lambda c: c.headers.extend([(b"Transfer-Encoding", b"chunked"),
                                                                       (b"Content-Length", b"3")])),
            # gunicorn leaves the chunks to the app, which reads them (service/web/limits.py).
            ("a bad chunk size", lambda c: (c.headers.append((b"Transfer-Encoding", b"chunked")),
                                            setattr(c, "body", b"zz\r\nabc\r\n0\r\n\r\n"))),
        ]
        mutation, spoil = self.rng.choice(kinds)
        case = self._case(operation, f"framing: {mutation}", server_own=mutation in SERVER_OWN_IN_DOCS, framed=True)
        spoil(case)
        return case


def generate(document: dict, seed: int, count: int, auth: str) -> list[Case]:
    generator = Generator(document, seed, auth)
    return [generator.case() for _ in range(count)]


# --- a raw HTTP/1.1 client ---------------------------------------------------------------


def encode(case: Case) -> bytes:
    lines = [case.method + b" " + case.target + b" HTTP/1.1", b"Host: 127.0.0.1", b"Connection: close"]
    lines += [name + b": " + value for name, value in case.headers]
    if not case.framed:
        lines.append(b"Content-Length: " + str(len(case.body)).encode())
    return b"\r\n".join(lines) + b"\r\n\r\n" + case.body


def send(port: int, case: Case, timeout: float) -> Answer:
    """Send the case and read the answer until the server closes; a server that has not
    finished answering within `timeout` gives status 0."""
    started = time.monotonic()
    chunks: list[bytes] = []
    try:
        with socket.create_connection(("127.0.0.1", port), timeout=timeout) as sock:
            try:
                sock.sendall(encode(case))
            except (BrokenPipeError, ConnectionResetError):
                pass  # refused before the body was read: the answer may still be there
            while True:
                chunk = sock.recv(65536)
                if not chunk:
                    break
                chunks.append(chunk)
                if time.monotonic() - started > timeout:
                    raise TimeoutError
    except TimeoutError:
        return Answer(0, "", b"".join(chunks), time.monotonic() - started)
    except ConnectionResetError:
        pass
    elapsed = time.monotonic() - started
    raw = b"".join(chunks)
    head, _, body = raw.partition(b"\r\n\r\n")
    while head.startswith(b"HTTP/1.1 1"):  # an interim answer (100 Continue): the final one follows
        head, _, body = body.partition(b"\r\n\r\n")
    lines = head.split(b"\r\n")
    try:
        status = int(lines[0].split()[1])
    except (IndexError, ValueError):
        return Answer(-1, "", raw, elapsed)
    content_type = ""
    for line in lines[1:]:
        name, _, value = line.partition(b":")
        if name.strip().lower() == b"content-type":
            content_type = value.strip().decode("latin-1")
    return Answer(status, content_type, body, elapsed)
