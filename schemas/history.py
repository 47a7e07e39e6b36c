"""One entry of a plug's or head's change history (GET /v1/plugs/{sku}/history,
GET /v1/heads/{head_id}/history)."""
from __future__ import annotations

from marshmallow import Schema, fields, validate

ACTIONS = ("create", "replace", "delete")
SOURCES = ("api", "import", "cli")


class ChangeSchema(Schema):
    class Meta:
        ordered = True

    id = fields.Integer(required=True, metadata={
        "description": "Grows with every change of any record: the order in which changes were made.",
        "example": 42})
    action = fields.String(required=True, validate=validate.OneOf(ACTIONS), metadata={
        "description": "create (`before` is null), replace, or delete (`after` is null).", "example": "replace"})
    actor = fields.String(required=True, metadata={
        "description": "Who made the change: the name of the API key, or `cli:<user>` for a command run "
                       "on the server.", "example": "counter-3"})
    source = fields.String(required=True, validate=validate.OneOf(SOURCES), metadata={
        "description": "api (POST, PUT, DELETE of the record), import (an import file) or cli.",
        "example": "api"})
    changed_at = fields.DateTime(required=True, metadata={
        "description": "When the change was committed, ISO 8601 in UTC.", "example": "2025-01-02T10:15:00+00:00"})
    version_before = fields.Integer(allow_none=True, metadata={
        "description": "The record's version before the change (its ETag was computed from it); null for create."})
    version_after = fields.Integer(allow_none=True, metadata={
        "description": "The record's version after the change; null for delete."})
    before = fields.Dict(allow_none=True, metadata={
        "description": "The record as GET answered before the change; null for create."})
    after = fields.Dict(allow_none=True, metadata={
        "description": "The record as GET answered after the change; null for delete."})


class HistoryQuerySchema(Schema):
    """History pages read newest first unless asked otherwise."""

    order = fields.String(load_default="newest_first", validate=validate.OneOf(("newest_first", "oldest_first")),
                          metadata={"description": "newest_first (default) or oldest_first"})
