"""schemathesis hooks for tests/api/test_fuzzing.py (loaded through SCHEMATHESIS_HOOKS).

The import endpoints document their JSON-lines bodies as plain text (one JSON document
per line); schemathesis has no serializer of its own for those media types.

A quantity written as text is documented as `format: quantity` (schemas/fields.py);
schemathesis draws such text from the strategy the unit grammar's property test uses:
well-formed quantities, issue 12's denial-of-service strings, and noise.
"""
from __future__ import annotations

import schemathesis

from tests.unit_strings import unit_strings

schemathesis.serializer.alias(["application/x-ndjson", "application/jsonl"], "text/plain")
schemathesis.openapi.format("quantity", unit_strings())
