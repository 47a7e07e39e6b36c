"""A small validator for the subset of OpenAPI 3.0 schema the service generates
(type, properties, required, items, nullable, enum, $ref, oneOf, additionalProperties),
so tests can check that what is sent is what the document promises without adding a
JSON-Schema dependency."""
from __future__ import annotations

from typing import Any

_TYPES = {
    "object": dict, "array": list, "string": str, "boolean": bool,
    "integer": int, "number": (int, float),
}


def resolve(spec: dict, schema: dict) -> dict:
    while "$ref" in schema:
        ref = schema["$ref"]
        assert ref.startswith("#/"), ref
        node: Any = spec
        for part in ref[2:].split("/"):
            node = node[part]
        schema = node
    return schema


def violations(spec: dict, schema: dict, value: Any, path: str = "$") -> list[str]:
    """Every way `value` departs from `schema` (empty when it conforms)."""
    schema = resolve(spec, schema)
    if value is None:
        return [] if schema.get("nullable") or not schema.get("type") else [f"{path}: null not allowed"]
    if "oneOf" in schema:
        if any(not violations(spec, option, value, path) for option in schema["oneOf"]):
            return []
        return [f"{path}: matches none of oneOf"]
    found: list[str] = []
    expected = schema.get("type")
    if expected:
        python_type = _TYPES[expected]
        if isinstance(value, bool) and expected in ("integer", "number"):
            return [f"{path}: boolean where {expected} expected"]
        if not isinstance(value, python_type):
            return [f"{path}: {type(value).__name__} where {expected} expected"]
    if "enum" in schema and value not in schema["enum"]:
        found.append(f"{path}: {value!r} not in {schema['enum']}")
    if isinstance(value, dict):
        properties = schema.get("properties", {})
        for name in schema.get("required", []):
            if name not in value:
                found.append(f"{path}: missing required member {name!r}")
        extra = schema.get("additionalProperties", True)
        for name, member in value.items():
            if name in properties:
                found += violations(spec, properties[name], member, f"{path}.{name}")
            elif extra is False:
                found.append(f"{path}: undocumented member {name!r}")
            elif isinstance(extra, dict):
                found += violations(spec, extra, member, f"{path}.{name}")
    if isinstance(value, list) and "items" in schema:
        for index, item in enumerate(value):
            found += violations(spec, schema["items"], item, f"{path}[{index}]")
    return found


def response_schema(spec: dict, path: str, method: str, status: int, media_type: str) -> dict:
    """The schema the document gives for one response (falling back to `default`)."""
    responses = spec["paths"][path][method]["responses"]
    response = responses.get(str(status)) or responses["default"]
    response = resolve(spec, response)
    return response["content"][media_type]["schema"]
