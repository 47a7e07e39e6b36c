"""What the plug and head endpoints share: get, create, replace and delete with the
contract's status codes (201 + Location, 409 on a taken identifier, 304 on a matching
If-None-Match, 412 on a stale If-Match), ETags from the row's version, and Last-Modified."""
from __future__ import annotations

from datetime import UTC, datetime
from email.utils import format_datetime
from typing import Any

from flask import request, url_for
from sqlalchemy.orm.exc import StaleDataError

from service.store import history
from service.store.repository import DuplicateIdentifier, Repository
from service.web import problems
from service.web.smorest import check_if_match, check_if_none_match, etag_of


def etag_data(row: Any, key: str) -> list[Any]:
    """What the ETag hashes: identifier, version and creation time (a record deleted and
    made again restarts at version 1 but is not the same record)."""
    return [getattr(row, key), row.version, _utc(row.created_at).isoformat()]


def _utc(stamp: datetime) -> datetime:
    """SQLite hands back naive datetimes (written in UTC); PostgreSQL aware ones."""
    if stamp.tzinfo is None:
        return stamp.replace(tzinfo=UTC)
    return stamp.astimezone(UTC)


def last_modified(row: Any) -> dict[str, str]:
    return {"Last-Modified": format_datetime(_utc(row.updated_at), usegmt=True)}


def tag(row: Any, key: str) -> str:
    return etag_of(etag_data(row, key))


def version_headers(row: Any, key: str) -> dict[str, str]:
    """ETag and Last-Modified of a stored record, for its answers."""
    return {"ETag": f'"{tag(row, key)}"', **last_modified(row)}


def get(repo: Repository, identifier: str, kind: str) -> tuple:
    """A stored record with its ETag (304 when If-None-Match holds it)."""
    key = repo.mapping.key
    row = repo.get(identifier)
    if row is None:
        not_found(kind, key, identifier)
    headers = version_headers(row, key)
    check_if_none_match(tag(row, key), last_modified(row))
    return repo.mapping.document_of(row), headers


def not_found(kind: str, key: str, identifier: str):
    problems.abort(404, f"No {kind} with {key} {identifier!r}.", errors={key: [f"no {kind} {identifier!r}"]})


def create(repo: Repository, document: dict[str, Any], endpoint: str, session) -> tuple:
    key = repo.mapping.key
    try:
        row = repo.add(document)
        history.record_change(session, history.KIND_BY_KEY[key], getattr(row, key), None,
                              repo.mapping.document_of(row), version_after=row.version)
        session.commit()
    except DuplicateIdentifier as duplicate:
        problems.abort(409, f"A record with {key} {duplicate.identifier!r} exists; replace it with PUT "
                            "or choose another identifier.",
                       errors={key: [f"{duplicate.identifier!r} exists"]})
    headers = {"Location": url_for(endpoint, **{key: getattr(row, key)}), **version_headers(row, key)}
    return repo.mapping.document_of(row), 201, headers


def replace(repo: Repository, identifier: str, document: dict[str, Any], kind: str, session) -> tuple:
    key = repo.mapping.key
    row = repo.get(identifier)
    if row is None:
        not_found(kind, key, identifier)
    given = document.get(key)
    if given is not None and given != identifier:
        problems.abort(422, f"The body's {key} differs from the path's; a record cannot be renamed.",
                       errors={key: [f"must equal {identifier!r}, the path's {key}"]})
    check_if_match(tag(row, key))
    before, version_before = repo.mapping.document_of(row), row.version
    try:
        repo.replace(row, {**document, key: identifier})
        history.record_change(session, history.KIND_BY_KEY[key], identifier, before,
                              repo.mapping.document_of(row), version_before=version_before,
                              version_after=row.version)
        session.commit()
    except StaleDataError:
        _changed_meanwhile(kind)
    return repo.mapping.document_of(row), version_headers(row, key)


def delete(repo: Repository, identifier: str, kind: str, session) -> None:
    key = repo.mapping.key
    row = repo.get(identifier)
    if row is None:
        not_found(kind, key, identifier)
    check_if_match(tag(row, key))
    before, version_before = repo.mapping.document_of(row), row.version
    try:
        repo.delete(row)
        history.record_change(session, history.KIND_BY_KEY[key], identifier, before, None,
                              version_before=version_before)
        session.commit()
    except StaleDataError:
        _changed_meanwhile(kind)


def _changed_meanwhile(kind: str):
    """Another writer committed between this request's read and its write (the UPDATE or
    DELETE is conditional on the version read, so it changed nothing). With If-Match
    that is the stale-tag case, 412; without, 409: retry after reading again."""
    if request.if_match:
        problems.abort(412, f"The {kind} changed since the ETag sent in If-Match was read; "
                            "GET it again and retry.")
    problems.abort(409, f"The {kind} changed while this request ran; read it again and retry.")
