"""The request-body limit (PLUGFIT_MAX_BODY_BYTES) for bodies sent without Content-Length.

Flask refuses a body whose Content-Length is over MAX_CONTENT_LENGTH with a 413. A body
sent with `Transfer-Encoding: chunked` has no length up front, and werkzeug then stops
reading at the limit *silently*: the view sees the first 32 MiB as if it were all.
For a CSV import in replace mode that would mean deleting every record named only in
the part cut off. So a chunked body is read here, before any view, up to one byte past
the limit: over it, 413 (with the limit in the problem); within it, the request goes on
with the body buffered and its length known, as if the client had sent Content-Length.
"""
from __future__ import annotations

import io

from flask import Flask, current_app, request
from gunicorn.http.errors import ParseException

from service.web import problems


def _buffer_unsized_body() -> None:
    environ = request.environ
    if request.content_length is not None or "wsgi.input_terminated" not in environ:
        # Sized bodies are werkzeug's business; without wsgi.input_terminated werkzeug
        # reads an unsized body as empty, so it cannot be cut short either.
        return
    limit = current_app.config["MAX_BODY_BYTES"]
    try:
        body = environ["wsgi.input"].read(limit + 1)
    except (ParseException, ValueError, OSError):  # a chunk size that is not hexadecimal, a cut stream
        problems.abort(400, "The request body is not valid chunked transfer coding.")
    if len(body) > limit:
        problems.abort(413, f"The request body is larger than the {limit} bytes this service accepts "
                            "(setting PLUGFIT_MAX_BODY_BYTES).", limit=limit)
    environ["wsgi.input"] = io.BytesIO(body)
    environ["CONTENT_LENGTH"] = str(len(body))
    environ.pop("HTTP_TRANSFER_ENCODING", None)


def init_app(app: Flask) -> None:
    # First of the before_request hooks, so no other one reads the body unchecked.
    app.before_request_funcs.setdefault(None, []).insert(0, _buffer_unsized_body)
