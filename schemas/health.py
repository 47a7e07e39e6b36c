"""The health document."""
from __future__ import annotations

import marshmallow as ma


class HealthSchema(ma.Schema):
    class Meta:
        ordered = True

    status = ma.fields.String(required=True, metadata={"description": "`ok` when the service answers.", "example": "ok"})
    database = ma.fields.String(
        required=True,
        metadata={"description": "`ok` when the database answered a trivial query.", "example": "ok"},
    )
    version = ma.fields.String(required=True, metadata={"description": "The service's package version.", "example": "0.1.0"})
