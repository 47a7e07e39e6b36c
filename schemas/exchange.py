"""Query strings and answers of the inventory exchange (imports and exports).

The rows themselves are validated by `schemas.specs.StoredPlugSchema` and
`StoredHeadSchema` (see `service.formats.stock_file`); this module only describes the envelope.
"""
from __future__ import annotations

from marshmallow import Schema, fields

from .fields import Choice

IMPORT_MODES = ("upsert", "replace")


class ImportQuerySchema(Schema):
    mode = Choice(IMPORT_MODES, load_default="upsert", metadata={
        "description": "upsert: add new records and overwrite changed ones; replace: the file becomes "
                       "the whole table (records it does not name are deleted)"})
    dry_run = fields.Boolean(load_default=False, metadata={
        "description": "validate and count what would change, but write nothing"})


class ImportReportSchema(Schema):
    resource = fields.String(required=True, metadata={"example": "plugs"})
    mode = fields.String(required=True, metadata={"example": "upsert"})
    rows = fields.Integer(required=True, metadata={"description": "data rows in the file"})
    added = fields.Integer(required=True)
    changed = fields.Integer(required=True)
    unchanged = fields.Integer(required=True, metadata={"description": "equal to what is stored; not rewritten"})
    deleted = fields.Integer(required=True, metadata={"description": "replace mode: records the file did not name"})
    dry_run = fields.Boolean(required=True, metadata={"description": "true: nothing was written"})
