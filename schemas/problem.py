"""The error document (RFC 9457 problem details) every 4xx and 5xx answer carries.

The handler in `service.web.problems` builds its payload with `ProblemSchema().dump`, so the
document the OpenAPI file promises and the one a client receives cannot drift apart.
"""
from __future__ import annotations

import marshmallow as ma

PROBLEM_MEDIA_TYPE = "application/problem+json"


class ProblemSchema(ma.Schema):
    """RFC 9457 problem details, plus `errors` for validation failures."""

    class Meta:
        ordered = True

    type = ma.fields.String(
        required=True,
        metadata={
            "description": "A URI reference naming the kind of problem; `about:blank` when "
            "the status code says it all. Clients switch on this, not on `title`.",
            "example": "tag:plugfit,2025:problem/validation",
        },
    )
    title = ma.fields.String(
        required=True,
        metadata={"description": "Short summary of the kind of problem.", "example": "Validation failed"},
    )
    status = ma.fields.Integer(
        required=True,
        metadata={"description": "The HTTP status code of this answer.", "example": 422},
    )
    detail = ma.fields.String(
        required=True,
        metadata={
            "description": "What went wrong with this request, in a sentence.",
            "example": "The request body has fields that are missing or cannot be read; see errors.",
        },
    )
    limit = ma.fields.Integer(
        metadata={
            "description": "On a refusal over a configured limit (413 body or batch too large, 422 page_size "
            "too large): the limit, in the unit `detail` names (bytes, items, records per page).",
            "example": 1000,
        },
    )
    errors = ma.fields.Dict(
        keys=ma.fields.String(),
        metadata={
            "description": "Validation messages by field, mirroring the request's structure: "
            "a list of messages at each field that failed.",
            "example": {"plug": {"reach": ["'3 kg' is not a length."]}},
        },
    )
