"""schemathesis hooks for tests/api/test_fuzzing.py (loaded through SCHEMATHESIS_HOOKS).

The import endpoints document their JSON-lines bodies as plain text (one JSON document
per line); schemathesis has no serializer of its own for those media types.
"""
from __future__ import annotations

import schemathesis

schemathesis.serializer.alias(["application/x-ndjson", "application/jsonl"], "text/plain")
