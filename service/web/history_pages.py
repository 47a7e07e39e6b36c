"""What GET /v1/plugs/{sku}/history and GET /v1/heads/{head_id}/history share.

Not a blueprint: the routes live on the plugs and heads blueprints (same tag, same
path parameter), and call `history_page` here.
"""
from __future__ import annotations

from datetime import UTC
from typing import Any

from flask_smorest.pagination import PaginationParameters

from service.store import db, history, repository
from service.store.models import ChangeRecord
from service.web import examples, records


def _example(record: dict[str, Any], changed_field: str, new_value: Any) -> list[dict[str, Any]]:
    """A replace after a create, newest first (example records, invented)."""
    changed = {**record, changed_field: new_value}
    return [
        {"id": 7, "action": "replace", "actor": "counter-3", "source": "api",
         "changed_at": "2025-01-02T10:15:00+00:00", "version_before": 1, "version_after": 2,
         "before": record, "after": changed},
        {"id": 3, "action": "create", "actor": "nightly-import", "source": "import",
         "changed_at": "2025-01-01T02:00:00+00:00", "version_before": None, "version_after": 1,
         "before": None, "after": record},
    ]


PLUG_EXAMPLE = _example(examples.PLUG_ANSWER, "quantity_on_hand", 11)
HEAD_EXAMPLE = _example(examples.HEAD_ANSWER, "description", "Example aluminium head, re-measured port")


def entry_document(row: ChangeRecord) -> dict[str, Any]:
    changed_at = row.changed_at
    # SQLite hands back naive datetimes (written in UTC); PostgreSQL aware ones.
    changed_at = changed_at.replace(tzinfo=UTC) if changed_at.tzinfo is None \
        else changed_at.astimezone(UTC)
    return {"id": row.id, "action": row.action, "actor": row.actor, "source": row.source,
            "changed_at": changed_at, "version_before": row.version_before,
            "version_after": row.version_after, "before": row.before, "after": row.after}


def history_page(kind: str, identifier: str, query: dict[str, Any],
                 pagination_parameters: PaginationParameters) -> list[dict[str, Any]]:
    session = db.session()
    rows, total = history.page(session, kind, identifier, pagination_parameters.first_item,
                               pagination_parameters.page_size, query["order"] == "newest_first")
    if total == 0:
        repo = repository.plugs(session) if kind == history.PLUG else repository.heads(session)
        if repo.get(identifier) is None:
            records.not_found(kind, repo.mapping.key, identifier)
    pagination_parameters.item_count = total
    return [entry_document(row) for row in rows]
