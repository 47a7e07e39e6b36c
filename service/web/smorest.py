"""flask-smorest, adjusted to this service's rules in one place, through public extension
points only: the `Api` and `Blueprint` subclasses override public methods and class
attributes, and an apispec plugin (`ContractPlugin`, apispec's documented plugin
interface) finishes the OpenAPI document. No private method of flask-smorest is
overridden, so its upgrades cannot silently undo these rules.

- `Api`: errors are RFC 9457 problems, documented as `application/problem+json`; the
  bearer-key security scheme, the `If-Match`/`If-None-Match` parameters and the `ETag`,
  `X-Pagination` and `Link` headers are declared under their real names.
- `Blueprint`: a JSON body must be sent as JSON (415 otherwise, instead of silently
  reading an empty body: curl's `-d` defaults to a form); `paginate` answers
  `X-Pagination` (always with `page`) and an RFC 8288 `Link` header and obeys
  PLUGFIT_MAX_PAGE_SIZE; `record_etag` marks an operation on one stored record (its
  answers carry the record's ETag; a GET honours If-None-Match, a PUT or DELETE honours
  If-Match when sent and never demands it: curl users and simple scripts may replace
  without it, clients that want lost-update protection send it and get 412 on a stale
  tag); each operation's security is documented from its access level
  (`service.web.auth`).
- Unknown query parameters are refused with a 422 naming them
  (`refuse_unknown_query_parameters`): the document is the list of what is accepted.

Every blueprint of the service is built from `Blueprint` here.
"""
from __future__ import annotations

import difflib
import hashlib
import http
import json
import re
from collections.abc import Callable
from functools import wraps
from typing import Any
from urllib.parse import urlencode

import flask_smorest
from apispec import BasePlugin
from apispec.ext.marshmallow import MarshmallowPlugin
from flask import Flask, Response, current_app, request
from flask_smorest.pagination import PaginationParameters
from webargs import core
from webargs.flaskparser import FlaskParser
from werkzeug.exceptions import HTTPException

from schemas.fields import CANONICAL_UNITS, LENGTH_INPUT, LENGTH_INPUT_COMPONENT, Quantity
from schemas.pages import PageMetadataSchema, PageQuerySchema
from schemas.problem import PROBLEM_MEDIA_TYPE, ProblemSchema
from service.formats import json_text
from service.web import auth, nul_characters, problems

BEARER_SCHEME = "bearerAuth"
JSON_MEDIA_TYPE = "application/json"

# Marks written into an operation's document by `auth.access` and `Blueprint.record_etag`
# (through flask-smorest's public `Blueprint.doc`) and turned into OpenAPI by `ContractPlugin`.
ACCESS_MARK = auth.ACCESS_MARK
ETAG_MARK = "x-plugfit-etag"

# Component names (keys under components/...); the wire names are inside.
IF_MATCH = "IfMatch"
IF_NONE_MATCH = "IfNoneMatch"
ETAG_HEADER = "ETag"
PAGINATION_HEADER = "XPagination"
LINK_HEADER = "Link"
PAGINATION_HEADER_NAME = "X-Pagination"


class JsonBodyParser(FlaskParser):
    """Refuses a body sent with another content type, so a form-encoded body is a 415
    that says what to do rather than a 422 listing every field as missing. Reads the
    body with `service.formats.json_text`: a byte order mark is skipped, and an integer
    of thousands of digits reaches its field, which refuses it by name."""

    def load_json(self, req, schema):  # type: ignore[override]
        data = req.get_data(cache=True)
        if not core.is_json(req.mimetype) and data:
            sent = f"as {req.mimetype}" if req.mimetype else "without a content type"
            problems.abort(415, f"The body was sent {sent}; send JSON with 'Content-Type: application/json'.")
        if not core.is_json(req.mimetype) or not data.removeprefix(json_text.BYTE_ORDER_MARK.encode()):
            return core.missing
        try:
            document = json_text.loads(data)
        except (json.JSONDecodeError, UnicodeDecodeError):
            problems.abort(400, "The request body is not valid JSON.")
        except RecursionError:
            # json.loads recurses once per nesting level; a body nested thousands deep
            # is not a plug, and must not become a 500.
            problems.abort(400, "The request body is nested too deeply to read.")
        if b"\\u0000" in data:  # JSON writes NUL only as this escape; the walk names the fields
            paths = list(nul_characters.nul_paths(document))
            if paths:
                problems.abort(422, "A field holds a NUL character.", errors=nul_characters.errors_at(paths))
        return document


# --- the OpenAPI document ------------------------------------------------------------------

class ContractPlugin(BasePlugin):
    """apispec plugin that writes this service's rules into the document: error answers
    as problem+json, security from the access level, ETag and If-Match under their real
    names, and an operationId on every operation (a missing one is an error at start-up,
    so a new endpoint cannot ship without its stable client function name)."""

    def init_spec(self, spec) -> None:
        super().init_spec(spec)
        self.spec = spec
        components = spec.components
        components.schema(LENGTH_INPUT_COMPONENT, LENGTH_INPUT)
        components.security_scheme(BEARER_SCHEME, {
            "type": "http", "scheme": "bearer", "description": "An API key made with `plugfit keys create NAME`."})
        components.parameter(IF_MATCH, "header", {
            "name": "If-Match", "required": False, "schema": {"type": "string"},
            "description": "The ETag of a GET. When sent, the change is refused with 412 if the record "
                           "changed since; when left out, the change is made unless another write got there "
                           "first (409: read again and retry)."})
        components.parameter(IF_NONE_MATCH, "header", {
            "name": "If-None-Match", "required": False, "schema": {"type": "string"},
            "description": "An ETag you hold; 304 without a body when the record still has it."})
        components.header(ETAG_HEADER, {
            "description": "The record's version tag: send it back in If-Match to refuse a stale change.",
            "schema": {"type": "string"}})
        components.header(PAGINATION_HEADER, {
            "description": "Pagination metadata as JSON (total, total_pages, first_page, last_page, page, "
                           "previous_page, next_page).", "schema": PageMetadataSchema})
        components.header(LINK_HEADER, {
            "description": "RFC 8288 links to the first, last, next and previous pages "
                           "(rel=\"first\", \"last\", \"next\", \"prev\"), with the same filters.",
            "schema": {"type": "string"}})

    def response_helper(self, response: dict, **kwargs: Any) -> dict:
        """Error answers (those with the problem schema) are application/problem+json."""
        content = response.get("content") or {}
        body = content.get(JSON_MEDIA_TYPE)
        schema = body.get("schema") if body else None
        if isinstance(schema, dict) and str(schema.get("$ref", "")).endswith("/Problem"):
            content = {PROBLEM_MEDIA_TYPE: body, **{k: v for k, v in content.items() if k != JSON_MEDIA_TYPE}}
            description = response.get("description")
            if description == "Default error response":
                description = "Any other error, as an RFC 9457 problem."
            return {**response, "content": content, "description": description}
        return response

    def operation_helper(self, path: str | None = None, operations: dict | None = None, **kwargs: Any) -> None:
        for method, operation in (operations or {}).items():
            if "operationId" not in operation:
                raise ValueError(f"{method.upper()} {path} has no operationId: give it one with "
                                 "@blp.doc(operationId=...) (short, stable: it names the client's function)")
            _document_access(operation, method)
            if operation.pop(ETAG_MARK, False):
                _document_etag(operation, method)


def _responses(operation: dict) -> dict:
    return operation.setdefault("responses", {})


def _successes(operation: dict) -> list[dict]:
    return [response for code, response in _responses(operation).items()
            if str(code).startswith("2") and isinstance(response, dict)]


def _document_access(operation: dict, method: str) -> None:
    level = operation.pop(ACCESS_MARK, None) or auth.default_level(method)
    if level == auth.PUBLIC:
        operation["security"] = []
        return
    _responses(operation).setdefault(401, http.HTTPStatus(401).name)
    # Reads are open unless PLUGFIT_REQUIRE_KEY_FOR_READS=1: either no key or the key.
    operation["security"] = [{BEARER_SCHEME: []}] if level == auth.WRITE else [{}, {BEARER_SCHEME: []}]


def _document_etag(operation: dict, method: str) -> None:
    parameters = operation.setdefault("parameters", [])
    if method in ("get", "head"):
        parameters.append(IF_NONE_MATCH)
        _responses(operation)[304] = {"description": "Not modified: the record still has the ETag you sent."}
    if method in ("put", "patch", "delete"):
        parameters.append(IF_MATCH)
        _responses(operation)[412] = http.HTTPStatus(412).name
    for response in _successes(operation):
        if "content" in response:
            response.setdefault("headers", {})["ETag"] = ETAG_HEADER


def _nullable_reference(converter, field, ret: dict, **kwargs: Any) -> dict:
    """apispec attribute function: a nullable nested object as `allOf: [$ref]` with
    `nullable: true` (OpenAPI 3.0's way), instead of apispec's
    `anyOf: [{type: object, nullable: true}, {$ref}]`, which generators read as an untyped
    bag or the typed object."""
    alternatives = ret.get("anyOf")
    if isinstance(alternatives, list) and {"type": "object", "nullable": True} in alternatives:
        references = [option for option in alternatives if option != {"type": "object", "nullable": True}]
        if len(references) == 1:
            del ret["anyOf"]
            return {"allOf": references, "nullable": True}
    return {}


def _query_quantity(converter, field, ret: dict, **kwargs: Any) -> dict:
    """apispec parameter attribute function: a quantity in a query string is a number or a
    string with units; the object forms a body may use cannot be sent there."""
    if isinstance(field, Quantity) and "anyOf" in ret.get("schema", {}):
        schema = {**ret["schema"], "anyOf": [form for form in ret["schema"]["anyOf"] if "$ref" not in form]}
        unit = CANONICAL_UNITS[field.kind]
        description = " ".join(part for part in (field.meaning, f"A number ({unit}) or a string with units.") if part)
        return {"schema": schema, "description": description}
    return {}


class Api(flask_smorest.Api):
    """The app's flask-smorest Api: problem+json errors and the contract's document."""

    ERROR_SCHEMA = ProblemSchema

    def init_app(self, app: Flask, *, spec_kwargs: dict | None = None) -> None:
        spec_kwargs = dict(spec_kwargs or {})
        spec_kwargs["extra_plugins"] = [*spec_kwargs.get("extra_plugins", ()), ContractPlugin()]
        marshmallow_plugin = spec_kwargs.setdefault("marshmallow_plugin", MarshmallowPlugin())
        super().init_app(app, spec_kwargs=spec_kwargs)
        marshmallow_plugin.converter.add_attribute_function(_nullable_reference)
        marshmallow_plugin.converter.add_parameter_attribute_function(_query_quantity)
        app.before_request(refuse_unknown_query_parameters)

    def handle_http_exception(self, error):
        return problems.handle_http_exception(error)


# --- unknown query parameters --------------------------------------------------------------

_FLASK_VARIABLE = re.compile(r"<(?:[^:<>]+:)?([^<>]+)>")


def _query_names_by_operation(app: Flask) -> dict[tuple[str, str], frozenset[str]]:
    """(OpenAPI path, method) -> the query parameters the document declares, built once."""
    names = app.extensions.get("plugfit.query_names")
    if names is None:
        document = app.extensions["plugfit.api"].spec.to_dict()
        names = {}
        for path, item in document["paths"].items():
            shared = [p for p in item.get("parameters", []) if p.get("in") == "query"]
            for method, operation in item.items():
                if isinstance(operation, dict) and method != "parameters":
                    declared = shared + [p for p in operation.get("parameters", []) if isinstance(p, dict)
                                         and p.get("in") == "query"]
                    names[(path, method.upper())] = frozenset(p["name"] for p in declared)
        app.extensions["plugfit.query_names"] = names
    return names


def refuse_unknown_query_parameters() -> None:
    """before_request: a query parameter the operation does not declare is a 422 naming
    it (as an unknown body member is), so `?thred=M14` is not read as "no filter"."""
    if not request.args or request.url_rule is None:
        return
    method = "GET" if request.method == "HEAD" else request.method
    path = _FLASK_VARIABLE.sub(r"{\1}", request.url_rule.rule)
    declared = _query_names_by_operation(current_app).get((path, method))
    if declared is None:  # not an operation of the document (the document itself, the reference pages)
        return
    unknown = sorted(set(request.args) - declared)
    if unknown:
        errors = {}
        for name in unknown:
            close = difflib.get_close_matches(name, declared, n=1)
            errors[name] = [f"unknown query parameter{f'; did you mean {close[0]}?' if close else ''}"]
        accepted = ", ".join(sorted(declared)) or "none"
        problems.abort(422, f"Unknown query parameter(s) {', '.join(unknown)}; this operation accepts: {accepted}.",
                       errors=errors)


# --- ETags of stored records -----------------------------------------------------------------

def etag_of(data: Any) -> str:
    """The tag of a record: a hash of what identifies its version (see `records.etag_data`)."""
    return hashlib.sha1(json.dumps(data, sort_keys=True).encode("utf-8")).hexdigest()


def check_if_match(tag: str) -> None:
    """412 when the client sent If-Match and the record's tag is not in it; nothing when
    it sent none (If-Match is honoured, never demanded)."""
    if request.if_match and not request.if_match.contains(tag):
        problems.abort(412, "The record changed since the ETag sent in If-Match was read; GET it again and retry.")


class NotModified(HTTPException):
    code = 304
    description = "Not modified."


def check_if_none_match(tag: str, headers: dict[str, str]) -> None:
    """304 (with the tag and `headers`) when a GET's If-None-Match holds the record's tag."""
    if request.method in ("GET", "HEAD") and request.if_none_match.contains_weak(tag):
        raise NotModified(response=Response(status=304, headers={"ETag": f'"{tag}"', **headers}))


# --- the blueprint ---------------------------------------------------------------------------

class Blueprint(flask_smorest.Blueprint):
    ARGUMENTS_PARSER = JsonBodyParser()

    # --- arguments: one schema instance per operation, built when the view is declared
    def arguments(self, schema, **kwargs):  # type: ignore[override]
        """Given a schema class, webargs builds a new instance (and deep-copies every
        nested schema's fields) on each request: about a third of a fit-check's time,
        measured with cProfile (benchmarks/bench_load.py). Instances are reusable:
        loading does not mutate them."""
        return super().arguments(schema() if isinstance(schema, type) else schema, **kwargs)

    # --- success answers are JSON unless said otherwise
    def response(self, status_code, schema=None, *, content_type=None, **kwargs):  # type: ignore[override]
        """Error answers are documented by the problem schema (application/problem+json,
        see `ContractPlugin`); a success answer with a schema is JSON unless the view says
        otherwise."""
        if content_type is None and schema is not None:
            content_type = JSON_MEDIA_TYPE
        return super().response(status_code, schema, content_type=content_type, **kwargs)

    # --- ETags of one stored record
    def record_etag(self, func: Callable) -> Callable:
        """Document an operation on one stored record: its answers carry the record's
        ETag; a GET takes If-None-Match (304), a PUT or DELETE takes If-Match (412 on a
        stale tag, never demanded). The view does the work with `check_if_none_match`,
        `check_if_match` and an `ETag` header (see `service.web.records`)."""
        return self.doc(**{ETAG_MARK: True})(func)

    # --- pagination: X-Pagination and Link, within the configured limit
    def paginate(self, pager=None, **kwargs):  # type: ignore[override]
        """The view gets `pagination_parameters` (flask-smorest's `PaginationParameters`),
        sets its `item_count`, and returns the page's items (or a ready `Response`)."""
        if pager is not None or kwargs:
            raise TypeError("paginate() takes no arguments here: views page their own queries")

        def decorator(func):
            @wraps(func)
            def wrapper(*args, page: int, page_size: int, **kw):
                limit = current_app.config["MAX_PAGE_SIZE"]
                if page_size > limit:
                    problems.abort(422, f"page_size may be at most {limit}.",
                                   errors={"page_size": [f"Must be between 1 and {limit}."]}, limit=limit)
                parameters = PaginationParameters(page, page_size)
                result = func(*args, pagination_parameters=parameters, **kw)
                headers = page_headers(parameters)
                if isinstance(result, Response):
                    result.headers.update(headers)
                    return result
                return result, headers

            documented = self.doc(responses={200: {"headers": {PAGINATION_HEADER_NAME: PAGINATION_HEADER,
                                                               "Link": LINK_HEADER}}})(wrapper)
            return self.arguments(PageQuerySchema, location="query", as_kwargs=True)(documented)

        return decorator


def page_metadata(page: int, page_size: int, total: int) -> dict[str, int]:
    """X-Pagination: always the page asked for; `previous_page` is the page before it, or
    the last page when the page asked for lies past the end (so a client that overshot
    finds its way back)."""
    pages = (total + page_size - 1) // page_size
    metadata = {"total": total, "total_pages": pages}
    if pages:
        metadata.update(first_page=1, last_page=pages)
    metadata["page"] = page
    if page > 1 and pages:
        metadata["previous_page"] = min(page - 1, pages)
    if page < pages:
        metadata["next_page"] = page + 1
    return metadata


def page_headers(parameters: PaginationParameters) -> dict[str, str]:
    if parameters.item_count is None:
        raise RuntimeError(f"{request.endpoint}: a paginated view must set pagination_parameters.item_count")
    metadata = page_metadata(parameters.page, parameters.page_size, parameters.item_count)
    links = {"first": 1, "last": max(1, metadata["total_pages"])}
    if "next_page" in metadata:
        links["next"] = metadata["next_page"]
    if "previous_page" in metadata:
        links["prev"] = metadata["previous_page"]
    query = [(name, value) for name, value in request.args.items(multi=True) if name not in ("page", "page_size")]
    base = request.base_url
    link = ", ".join(
        f'<{base}?{urlencode([*query, ("page", number), ("page_size", parameters.page_size)])}>; rel="{rel}"'
        for rel, number in links.items())
    return {PAGINATION_HEADER_NAME: json.dumps(metadata), "Link": link}



