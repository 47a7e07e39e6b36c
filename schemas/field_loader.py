"""`load(schema, document)`: what `schema.load(document)` returns, field by field.

Why: marshmallow's `Schema.load` spends about as long on its own machinery (hooks,
unknown-field bookkeeping, an error store per call) as on the fields themselves. A
10,000-line build list of distinct lines loads some 20,000 plug and head documents,
and that machinery was the largest single cost of the batch endpoint
(docs/performance.md). Here each field of the schema deserializes its value through
its own public `deserialize`, then the schema's `rules` run: the same field
definitions and the same rules, so the schema stays the one source of what is valid.

Only documents that load cleanly take this path. Anything else (not an object, a key
the schema does not declare, a field or a rule that refuses its value) is loaded again
by `schema.load`, so every error message, and its shape, is marshmallow's own.
`tests/unit/test_field_loader.py` checks both paths agree on documents of every field.
"""
from __future__ import annotations

from typing import Any

from marshmallow import Schema, ValidationError
from marshmallow.utils import missing

from .specs import RuledSchema, apply_rules


def load(schema: Schema, document: Any) -> Any:
    """`schema.load(document)`, through the fields and the schema's rules directly when
    the schema is a `RuledSchema` (no hooks but its rules) and the document loads
    cleanly; raises marshmallow's own ValidationError otherwise."""
    if not isinstance(schema, RuledSchema) or not isinstance(document, dict):
        return schema.load(document)
    declared = schema.load_fields
    for name in document:
        if name not in declared:
            return schema.load(document)  # unknown: refused with marshmallow's message
    loaded: dict[str, Any] = {}
    try:
        for name, field in declared.items():
            value = field.deserialize(document.get(name, missing), name, document)
            if value is not missing:
                loaded[name] = value
        apply_rules(schema.rules, loaded)
    except ValidationError:
        return schema.load(document)
    return loaded
