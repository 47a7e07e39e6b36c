"""Text with a NUL character (U+0000) is refused before it reaches the database.

PostgreSQL cannot hold NUL in text, and psycopg refuses such a parameter before it is
sent (a ValueError, which would be a 500), whether the text is to be stored (a
description) or only looked up (`/v1/plugs/%00`, `?q=%00`). SQLite would store it, and
a record one database accepts and the other refuses is worse than a clear refusal on
both. No sku, head_id, thread or description needs one. So, before any view:

- a path holding one is a 404 (no record can have such an identifier);
- a query parameter holding one is a 422 naming the parameter;
- a JSON body is checked where it is read (`service.web.smorest.JsonBodyParser`, which
  names the field); any other body (CSV, JSON lines) holding a NUL byte or the JSON
  escape `\\u0000` is a 422 naming the line.
"""
from __future__ import annotations

from collections.abc import Iterator
from typing import Any

from flask import Flask, request
from webargs import core

from service.web import problems

NUL = "\x00"
MESSAGE = "holds a NUL character (U+0000), which cannot be stored; remove it"


def nul_paths(value: Any, path: tuple = ()) -> Iterator[tuple]:
    """The places in a parsed JSON value whose text (a key or a string) holds a NUL."""
    if isinstance(value, str):
        if NUL in value:
            yield path
    elif isinstance(value, dict):
        for key, inner in value.items():
            if NUL in key:
                yield (*path, key)
            else:
                yield from nul_paths(inner, (*path, key))
    elif isinstance(value, list):
        for index, inner in enumerate(value):
            yield from nul_paths(inner, (*path, index))


def errors_at(paths: list[tuple]) -> dict[str, Any]:
    """`errors` mirroring the body: {"plug": {"description": [MESSAGE]}}."""
    errors: dict[str, Any] = {}
    for path in paths:
        if not path:  # the body is itself a string
            return {"_body": [MESSAGE]}
        holder = errors
        for part in path[:-1]:
            holder = holder.setdefault(str(part), {})
        holder[str(path[-1])] = [MESSAGE]
    return errors


def _refuse_nul_characters() -> None:
    if NUL in request.path:
        problems.abort(404, "Nothing is served at this path.")
    named = sorted({name for name, value in request.args.items(multi=True) if NUL in name or NUL in value})
    if named:
        problems.abort(422, "A query parameter holds a NUL character.", errors={name: [MESSAGE] for name in named})
    if core.is_json(request.mimetype):
        return  # read, and checked field by field, by the JSON body parser
    body = request.get_data(cache=True)
    for needle in (b"\x00", b"\\u0000"):
        at = body.find(needle)
        if at >= 0:
            line = body.count(b"\n", 0, at) + 1
            problems.abort(422, f"The body holds a NUL character on line {line}.", errors={f"line {line}": [MESSAGE]})


def init_app(app: Flask) -> None:
    app.before_request(_refuse_nul_characters)
