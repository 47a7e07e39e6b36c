"""flask-smorest, adjusted to this service's rules in one place.

- `Api`: errors are RFC 9457 problems, documented as `application/problem+json`; the
  bearer-key security scheme is declared.
- `Blueprint`: a JSON body must be sent as JSON (415 otherwise, instead of silently
  reading an empty body — curl's `-d` defaults to a form); page sizes obey
  PLUGFIT_MAX_PAGE_SIZE; `If-Match` is honoured when sent but not required (curl users
  and simple scripts may replace without it; clients that want lost-update protection
  send it and get 412 on a stale tag); each operation's security is documented from its
  access level (see `service.web.auth`).

Every blueprint of the service is built from `Blueprint` here.
"""
from __future__ import annotations

import http
from functools import wraps
from typing import Any, ClassVar

import flask_smorest
from flask import current_app, request
from flask_smorest.utils import prepare_response
from webargs import core
from webargs.flaskparser import FlaskParser

from schemas.problem import PROBLEM_MEDIA_TYPE, ProblemSchema
from service.web import auth, problems

BEARER_SCHEME = "bearerAuth"
CONTRACT_MAX_PAGE_SIZE = 1000
MAX_PAGE = 1_000_000_000


class JsonBodyParser(FlaskParser):
    """Refuses a body sent with another content type, so a form-encoded body is a 415
    that says what to do rather than a 422 listing every field as missing."""

    def load_json(self, req, schema):  # type: ignore[override]
        if not core.is_json(req.mimetype) and req.get_data(cache=True):
            sent = f"as {req.mimetype}" if req.mimetype else "without a content type"
            problems.abort(415, f"The body was sent {sent}; send JSON with 'Content-Type: application/json'.")
        try:
            return super().load_json(req, schema)
        except RecursionError:
            # json.loads recurses once per nesting level; a body nested thousands deep
            # is not a plug, and must not become a 500.
            problems.abort(400, "The request body is nested too deeply to read.")


class Api(flask_smorest.Api):
    """The app's flask-smorest Api with problem+json error handling."""

    ERROR_SCHEMA = ProblemSchema

    def handle_http_exception(self, error):
        return problems.handle_http_exception(error)

    def _register_responses(self) -> None:
        """Like flask-smorest's, but error responses are documented as problem+json."""
        for status in http.HTTPStatus:
            response: dict[str, Any] = {"description": status.phrase}
            if status >= 400:
                response["schema"] = self.ERROR_SCHEMA
                prepare_response(response, self.spec, PROBLEM_MEDIA_TYPE)
            self.spec.components.response(status.name, response, lazy=True)
        default = {"description": "Any other error, as an RFC 9457 problem.", "schema": self.ERROR_SCHEMA}
        prepare_response(default, self.spec, PROBLEM_MEDIA_TYPE)
        self.spec.components.response(self.DEFAULT_ERROR_RESPONSE_NAME, default, lazy=True)
        self.spec.components.security_scheme(
            BEARER_SCHEME,
            {"type": "http", "scheme": "bearer",
             "description": "An API key made with `plugfit keys create NAME`."},
        )
        self.spec.components.parameter(
            "IF_MATCH_OPTIONAL", "header",
            {"description": "ETag from a GET; when sent, the change is refused with 412 if the "
                            "record changed since.", "required": False, "schema": {"type": "string"}},
        )


class Blueprint(flask_smorest.Blueprint):
    ARGUMENTS_PARSER = JsonBodyParser()
    DEFAULT_PAGINATION_PARAMETERS: ClassVar[dict[str, int]] = {"page": 1, "page_size": 50, "max_page_size": CONTRACT_MAX_PAGE_SIZE}

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        super().__init__(*args, **kwargs)
        self._prepare_doc_cbks.append(self._prepare_security_doc)

    # --- arguments: one schema instance per operation, built when the view is declared
    def arguments(self, schema, **kwargs):  # type: ignore[override]
        """Given a schema class, webargs builds a new instance (and deep-copies every
        nested schema's fields) on each request: about a third of a fit-check's time,
        measured with cProfile (benchmarks/bench_load.py). Instances are reusable:
        loading does not mutate them."""
        return super().arguments(schema() if isinstance(schema, type) else schema, **kwargs)

    # --- pagination: the configured limit may be lower than the contract's ceiling
    def paginate(self, pager=None, **kwargs):  # type: ignore[override]
        smorest_decorator = super().paginate(pager, **kwargs)

        def decorator(func):
            paginated = smorest_decorator(func)

            @wraps(paginated)
            def wrapper(*args, **kw):
                limit = current_app.config["MAX_PAGE_SIZE"]
                raw = request.args.get("page_size")
                if raw is not None and raw.isdigit() and int(raw) > limit:
                    problems.abort(422, f"page_size may be at most {limit}.",
                                   errors={"page_size": [f"Must be between 1 and {limit}."]}, limit=limit)
                raw_page = request.args.get("page")
                if raw_page is not None and raw_page.isdigit() and int(raw_page) > MAX_PAGE:
                    # Far past any list, and past what a database OFFSET can hold.
                    problems.abort(422, f"page may be at most {MAX_PAGE}.",
                                   errors={"page": [f"Must be between 1 and {MAX_PAGE}."]})
                return paginated(*args, **kw)

            return wrapper

        return decorator

    # --- ETag: If-Match optional
    def _check_precondition(self) -> None:
        """Do not demand If-Match (flask-smorest answers 428 without it)."""

    def _verify_check_etag(self) -> None:
        if request.if_match:
            super()._verify_check_etag()

    def check_etag_if_sent(self, etag_data: Any) -> None:
        """Compare If-Match with the record's tag, when the client sent one."""
        if request.if_match:
            self.check_etag(etag_data)

    def _prepare_etag_doc(self, doc, doc_info, **kwargs):  # type: ignore[override]
        doc = super()._prepare_etag_doc(doc, doc_info, **kwargs)
        doc.get("responses", {}).pop(428, None)
        if "parameters" in doc:
            doc["parameters"] = ["IF_MATCH_OPTIONAL" if p == "IF_MATCH" else p for p in doc["parameters"]]
        return doc

    # --- security, from the access level of the operation
    @staticmethod
    def _prepare_security_doc(doc, doc_info, *, method, **kwargs):
        level = doc_info.get("plugfit_access") or auth.default_level(method)
        if level == auth.PUBLIC:
            doc["security"] = []
            return doc
        responses = doc.setdefault("responses", {})
        responses.setdefault(401, http.HTTPStatus(401).name)
        if level == auth.WRITE:
            doc["security"] = [{BEARER_SCHEME: []}]
        else:  # open unless PLUGFIT_REQUIRE_KEY_FOR_READS=1
            doc["security"] = [{}, {BEARER_SCHEME: []}]
        return doc
