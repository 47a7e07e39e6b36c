"""The append-only history of every change to a plug or a head.

Whoever changes a record adds its history entry in the same session, before the
commit, so the change and its entry are one transaction: neither exists without the
other. The API's create/replace/delete do this (service/web/records.py); an import
writes an `entry` per change with bulk statements (`service.usecases.stock`). Entries
are never updated or deleted: the migration that made the table (0003) also made
database triggers that refuse it.

`before` and `after` are kept as the API shows the record (the GET body), so the
history reads like the API and survives later changes to the table's columns.
"""
from __future__ import annotations

import getpass
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import datetime
from functools import cache
from typing import Any

from flask import g, has_request_context
from marshmallow import Schema
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from service.store.models import ChangeRecord, utc_now

PLUG, HEAD = "plug", "head"
KIND_BY_KEY = {"sku": PLUG, "head_id": HEAD}
CREATE, REPLACE, DELETE = "create", "replace", "delete"
API, IMPORT, CLI = "api", "import", "cli"
ACTOR_LENGTH = 100


@dataclass(frozen=True)
class Change:
    """One record's change, for `record_change`. `before`/`after` are stored documents as
    the repository reads them (`RecordMapping.document_of`), None for a create/delete."""

    identifier: str
    before: Mapping[str, Any] | None
    after: Mapping[str, Any] | None
    version_before: int | None = None
    version_after: int | None = None


@cache
def _schema(kind: str) -> Schema:
    from schemas.answers import HeadSchema, PlugSchema

    return {PLUG: PlugSchema, HEAD: HeadSchema}[kind]()


def as_shown(kind: str, document: Mapping[str, Any] | None) -> dict[str, Any] | None:
    """A stored document as the API's GET shows it (plain JSON values)."""
    return None if document is None else dict(_schema(kind).dump(document))


def action_of(before: Mapping[str, Any] | None, after: Mapping[str, Any] | None) -> str:
    if before is None and after is None:
        raise ValueError("a change needs a before or an after")
    return CREATE if before is None else DELETE if after is None else REPLACE


def current_actor() -> str:
    """The API key's name inside a request; `cli:<user>` for a command run on the server."""
    if has_request_context():
        return g.get("api_key_name") or "anonymous"
    try:
        return f"cli:{getpass.getuser()}"[:ACTOR_LENGTH]
    except (KeyError, OSError):  # no user name in this environment
        return "cli"


def current_source() -> str:
    return API if has_request_context() else CLI


def entry(kind: str, identifier: str, before: dict[str, Any] | None, after: dict[str, Any] | None, actor: str,
          source: str, when: datetime, version_before: int | None = None,
          version_after: int | None = None) -> dict[str, Any]:
    """One history row, `before` and `after` already as the API shows them (`as_shown`)."""
    return {
        "resource": kind, "identifier": identifier, "action": action_of(before, after),
        "actor": actor[:ACTOR_LENGTH], "source": source, "changed_at": when,
        "version_before": version_before, "version_after": version_after, "before": before, "after": after,
    }


def _row(kind: str, change: Change, actor: str, source: str, when: datetime) -> dict[str, Any]:
    return entry(kind, change.identifier, as_shown(kind, change.before), as_shown(kind, change.after), actor,
                 source, when, change.version_before, change.version_after)


def record_change(session: Session, kind: str, key: str, before: Mapping[str, Any] | None,
                  after: Mapping[str, Any] | None, actor: str | None = None, *, source: str | None = None,
                  version_before: int | None = None, version_after: int | None = None) -> None:
    """Add one entry for the record `key` of `kind` (PLUG or HEAD) to `session`; the
    caller's commit writes it with the change itself."""
    change = Change(key, before, after, version_before, version_after)
    session.add(ChangeRecord(**_row(kind, change, actor or current_actor(), source or current_source(), utc_now())))


def page(session: Session, kind: str, key: str, offset: int, limit: int,
         newest_first: bool = True) -> tuple[Sequence[ChangeRecord], int]:
    """One page of the record's entries and how many there are in all."""
    where = (ChangeRecord.resource == kind, ChangeRecord.identifier == key)
    total = session.scalar(select(func.count()).select_from(ChangeRecord).where(*where)) or 0
    order = ChangeRecord.id.desc() if newest_first else ChangeRecord.id.asc()
    rows = session.scalars(select(ChangeRecord).where(*where).order_by(order).offset(offset).limit(limit)).all()
    return rows, total
