"""Stored plugs and heads for a batch, fetched all at once.

A build list of 10,000 lines may name a few hundred skus; one query per line would be
10,000 round trips. Every distinct identifier is fetched with `IN (...)`, a few
thousand per query, so a list needs one or two queries whatever its length. Shared by
the batch endpoint (the request's session) and the embedded CLI (its own session).
"""
from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from service.store import repository
from service.store.models import Head, Plug

# Identifiers per IN (...) query: far below SQLite's 32,766 and PostgreSQL's 65,535
# bound parameters, so a list naming 50,000 distinct skus still needs only ten queries.
REFERENCE_CHUNK = 5000


def _chunks(identifiers: Iterable[str]) -> Iterable[list[str]]:
    ordered = sorted(identifiers)
    for start in range(0, len(ordered), REFERENCE_CHUNK):
        yield ordered[start:start + REFERENCE_CHUNK]


def fetch_documents(session: Session, skus: set[str], head_ids: set[str]
                    ) -> tuple[dict[str, dict[str, Any]], dict[str, dict[str, Any]]]:
    """The stored documents (as `repository` reads them) of every sku and head_id found."""
    plugs: dict[str, dict[str, Any]] = {}
    for chunk in _chunks(skus):
        for row in session.scalars(select(Plug).where(Plug.sku.in_(chunk))):
            plugs[row.sku] = repository.PLUGS.document_of(row)
    heads: dict[str, dict[str, Any]] = {}
    for chunk in _chunks(head_ids):
        for row in session.scalars(select(Head).where(Head.head_id.in_(chunk))):
            heads[row.head_id] = repository.HEADS.document_of(row)
    return plugs, heads
