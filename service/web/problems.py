"""Every error leaves as `application/problem+json` (RFC 9457).

flask-smorest's own handler answers `{"code", "status", "message"}` in plain JSON and
Flask's default pages are HTML; both are replaced here. `abort()` is the one way a
view reports a client error: it raises, the handler below turns the exception into a
problem document, so views declare one success schema and nothing else.
"""
from __future__ import annotations

import logging
from collections.abc import Mapping
from http import HTTPStatus
from typing import Any, NoReturn

from flask import Flask, Response, current_app, json
from sqlalchemy.exc import OperationalError
from sqlalchemy.orm.exc import StaleDataError
from webargs.flaskparser import abort as _webargs_abort
from werkzeug.exceptions import HTTPException, InternalServerError

from schemas.problem import PROBLEM_MEDIA_TYPE, ProblemSchema

log = logging.getLogger("plugfit.problems")

TYPE_PREFIX = "tag:plugfit,2025:problem/"

# The kinds of problem clients may want to tell apart; anything else is `about:blank`
# (RFC 9457 section 4.2.1: the status code alone describes it).
TYPES_BY_STATUS: dict[int, str] = {
    400: "bad-request",
    401: "unauthorized",
    403: "forbidden",
    404: "not-found",
    405: "method-not-allowed",
    409: "conflict",
    412: "precondition-failed",
    413: "body-too-large",
    415: "unsupported-media-type",
    422: "validation",
    500: "internal",
}

# webargs files validation messages under the location it read ("json", "query", …);
# clients expect them to mirror the body they sent, so one such level is removed.
_WEBARGS_LOCATIONS = {"json", "query", "querystring", "form", "headers", "cookies", "files",
                      "view_args", "path", "json_or_form"}

_DETAIL_BY_STATUS: dict[int, str] = {
    400: "The request could not be read.",
    401: "This operation needs a valid API key: send 'Authorization: Bearer <key>'.",
    404: "Nothing is served at this path.",
    405: "This path does not accept this method.",
    412: "The record changed since the ETag sent in If-Match was read; GET it again and retry.",
    413: "The request body is larger than this service accepts.",
    415: "Send the body as JSON with 'Content-Type: application/json'.",
    422: "The request has fields that are missing or cannot be read; see errors.",
    500: "The service failed while answering; the failure has been logged.",
}

_schema = ProblemSchema()


def problem_type(slug: str) -> str:
    return TYPE_PREFIX + slug


def abort(
    status: int,
    detail: str,
    *,
    errors: Mapping[str, Any] | None = None,
    slug: str | None = None,
    title: str | None = None,
    headers: Mapping[str, str] | None = None,
    limit: int | None = None,
) -> NoReturn:
    """Stop the request with a problem; `errors` mirrors the request's structure, `limit`
    is the configured limit a refusal is about (problem member `limit`)."""
    data: dict[str, Any] = {"message": detail}
    if limit is not None:
        data["limit"] = limit
    if errors is not None:
        data["errors"] = dict(errors)
    if slug is not None:
        data["slug"] = slug
    if title is not None:
        data["title"] = title
    if headers:
        data["headers"] = dict(headers)
    _webargs_abort(status, **data)


def _strip_location(messages: Any) -> Any:
    if isinstance(messages, Mapping) and len(messages) == 1:
        (location, inner), = messages.items()
        if location in _WEBARGS_LOCATIONS and isinstance(inner, (Mapping, list)):
            return inner
    return messages


def problem_document(status: int, detail: str | None = None, *, errors: Any = None,
                     slug: str | None = None, title: str | None = None, limit: int | None = None) -> dict[str, Any]:
    slug = slug or TYPES_BY_STATUS.get(status)
    document: dict[str, Any] = {
        "type": problem_type(slug) if slug else "about:blank",
        "title": title or _phrase(status),
        "status": status,
        "detail": detail or _DETAIL_BY_STATUS.get(status) or _phrase(status) + ".",
    }
    if limit is not None:
        document["limit"] = limit
    if errors is not None:
        if not isinstance(errors, Mapping):
            errors = {"_request": errors if isinstance(errors, list) else [str(errors)]}
        document["errors"] = errors
    return _schema.dump(document)


def problem_response(status: int, detail: str | None = None, *, errors: Any = None,
                     slug: str | None = None, title: str | None = None,
                     headers: Mapping[str, str] | None = None, limit: int | None = None) -> Response:
    body = problem_document(status, detail, errors=errors, slug=slug, title=title, limit=limit)
    response = Response(json.dumps(body), status=status, mimetype=PROBLEM_MEDIA_TYPE)
    for name, value in (headers or {}).items():
        response.headers[name] = value
    return response


def _phrase(status: int) -> str:
    try:
        return HTTPStatus(status).phrase
    except ValueError:
        return "Error"


def handle_http_exception(error: HTTPException) -> Response:
    """Turn any HTTPException (from abort, webargs, werkzeug or Flask) into a problem."""
    status = error.code or 500
    if status < 400:
        # 304 Not Modified and friends carry no body; a ready response keeps its headers.
        if error.response is not None:
            return error.response
        response = Response(status=status)
        for name, value in getattr(error, "data", {}).get("headers", {}).items():
            response.headers[name] = value
        return response
    data: dict[str, Any] = getattr(error, "data", None) or {}
    errors = data.get("errors")
    if errors is None and "messages" in data:  # webargs validation failure
        errors = data["messages"]
    if errors is not None:
        errors = _strip_location(errors)
    detail = data.get("message")
    if detail is None and status not in _DETAIL_BY_STATUS and status < 500:
        detail = error.description
    limit = data.get("limit")
    if status == 413 and detail is None:
        limit = current_app.config.get("MAX_BODY_BYTES")
        detail = (f"The request body is larger than the {limit} bytes this service accepts "
                  "(setting PLUGFIT_MAX_BODY_BYTES).")
    if status == 400 and errors == ["Invalid JSON body."]:
        detail, errors = "The request body is not valid JSON.", None
    if isinstance(error, InternalServerError) or status >= 500:
        # Never leak an exception's text to the client: it may hold paths or SQL.
        detail = data.get("message") or _DETAIL_BY_STATUS.get(500)
    headers = dict(data.get("headers") or {})
    if status == 405 and hasattr(error, "valid_methods") and error.valid_methods:
        headers["Allow"] = ", ".join(error.valid_methods)
    if status == 401:
        headers.setdefault("WWW-Authenticate", 'Bearer realm="plugfit"')
    return problem_response(status, detail, errors=errors, slug=data.get("slug"),
                            title=data.get("title"), headers=headers, limit=limit)


def init_app(app: Flask) -> None:
    app.register_error_handler(HTTPException, handle_http_exception)
    # A locked SQLite file (a long write elsewhere) or a database that went away is not
    # a fault of the request: 503 with Retry-After tells a client to try again.
    app.register_error_handler(OperationalError, _handle_database_unavailable)
    # A version-guarded UPDATE or DELETE that matched no row: another writer committed
    # between this request's read and its write (an import racing a PUT, say). Nothing
    # was written (the request's transaction is rolled back); the client reads again.
    app.register_error_handler(StaleDataError, _handle_changed_meanwhile)
    # An exception escaping a view reaches Flask as InternalServerError(original_exception=…);
    # registering the base class as well covers errors raised outside the view.
    app.register_error_handler(Exception, _handle_unexpected)


def _handle_database_unavailable(error: OperationalError) -> Response:
    log.error("database unavailable", extra={"fields": {"error": str(error.orig)[:200]}})
    return problem_response(503, "The database is busy or unreachable; retry shortly.",
                            slug="database-unavailable", headers={"Retry-After": "1"})


def _handle_changed_meanwhile(_error: StaleDataError) -> Response:
    return problem_response(409, "A record this request changes was changed by another request while it ran; "
                                 "nothing was written. Read it again and retry.")


def _handle_unexpected(error: Exception) -> Response:
    if isinstance(error, HTTPException):
        return handle_http_exception(error)
    log.exception("unhandled exception", exc_info=error)
    return problem_response(500)
