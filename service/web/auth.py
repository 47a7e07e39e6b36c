"""API keys: created by the CLI, shown once, stored only as a SHA-256 hash.

Access is decided per operation, default-deny for writes: every method other than
GET/HEAD/OPTIONS needs a key unless its view is marked `@access(READ)` (fit-checks,
batches and diagrams are computations, not changes). Reads are open unless the
operator sets PLUGFIT_REQUIRE_KEY_FOR_READS=1. `PUBLIC` operations (health, the OpenAPI
document) are always open so probes and client generators keep working.
"""
from __future__ import annotations

import hashlib
import hmac
import secrets
from collections.abc import Callable
from dataclasses import dataclass
from typing import TypeVar

import flask_smorest
from flask import Flask, current_app, g, request
from sqlalchemy import select
from sqlalchemy.orm import Session

from service.store.models import ApiKey
from service.web import problems

PUBLIC = "public"
READ = "read"
WRITE = "write"
READ_METHODS = frozenset({"GET", "HEAD", "OPTIONS"})
# Endpoints of blueprints we do not write (flask-smorest serves the OpenAPI document).
PUBLIC_BLUEPRINTS = frozenset({"api-docs", "api-reference"})
# The mark `access` leaves in the operation's document, turned into its `security` by
# `service.web.smorest.ContractPlugin`.
ACCESS_MARK = "x-plugfit-access"

KEY_PREFIX = "pfk_"
# Characters of the key kept in clear to find its row and tell keys apart in listings.
LOOKUP_LENGTH = 12

F = TypeVar("F", bound=Callable)


def access(level: str) -> Callable[[F], F]:
    """Mark a view method's access level; also read by the OpenAPI security callback."""
    if level not in (PUBLIC, READ, WRITE):
        raise ValueError(f"unknown access level {level!r}")

    def mark(func: F) -> F:
        func._plugfit_access = level  # type: ignore[attr-defined]
        # flask-smorest's public doc decorator; functools.wraps carries the attribute over.
        return flask_smorest.Blueprint.doc(**{ACCESS_MARK: level})(func)

    return mark


def default_level(method: str) -> str:
    return READ if method.upper() in READ_METHODS else WRITE


def hash_key(key: str) -> str:
    """SHA-256 suffices: keys are 256-bit random tokens, so there is nothing to brute-force."""
    return hashlib.sha256(key.encode("utf-8")).hexdigest()


@dataclass(frozen=True)
class NewKey:
    name: str
    key: str


def create_key(session: Session, name: str) -> NewKey:
    """Store a new key's hash under `name` and return the key, which is not kept."""
    key = KEY_PREFIX + secrets.token_urlsafe(32)
    session.add(ApiKey(name=name, prefix=key[:LOOKUP_LENGTH], key_hash=hash_key(key)))
    session.flush()
    return NewKey(name, key)


def find_key(session: Session, presented: str) -> ApiKey | None:
    """The stored key matching `presented`, comparing hashes in constant time."""
    if not presented.startswith(KEY_PREFIX) or len(presented) > 200:
        return None
    wanted = hash_key(presented)
    candidates = session.scalars(select(ApiKey).where(ApiKey.prefix == presented[:LOOKUP_LENGTH]))
    match = None
    for candidate in candidates:
        if hmac.compare_digest(candidate.key_hash, wanted):
            match = candidate
    return match


def _operation_level() -> str | None:
    """The access level of the matched view, or None when no view matched (404/405)."""
    if request.url_rule is None or request.endpoint is None:
        return None
    if request.blueprint in PUBLIC_BLUEPRINTS:
        return PUBLIC
    view = current_app.view_functions.get(request.endpoint)
    view_class = getattr(view, "view_class", None)
    handler = getattr(view_class, request.method.lower(), None) if view_class else view
    if handler is None and request.method == "HEAD" and view_class is not None:
        handler = getattr(view_class, "get", None)
    return getattr(handler, "_plugfit_access", None) or default_level(request.method)


def _bearer_token() -> str | None:
    header = request.headers.get("Authorization", "")
    scheme, _, token = header.partition(" ")
    if scheme.lower() != "bearer" or not token.strip():
        return None
    return token.strip()


def enforce() -> None:
    """before_request hook: 401 problem unless the operation is open or the key is valid."""
    level = _operation_level()
    if level is None or level == PUBLIC:
        return
    if level == READ and not current_app.config["REQUIRE_KEY_FOR_READS"]:
        return
    token = _bearer_token()
    if token is None:
        problems.abort(401, "This operation needs an API key: send 'Authorization: Bearer <key>'.")
    from service.store import db

    key = find_key(db.session(), token)
    if key is None:
        problems.abort(401, "The API key is not valid (unknown or revoked).")
    g.api_key_name = key.name


def init_app(app: Flask) -> None:
    app.before_request(enforce)
