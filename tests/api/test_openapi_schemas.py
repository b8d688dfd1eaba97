"""Every API response is described by a schema in the OpenAPI document (no free-form objects)."""

from __future__ import annotations

from typing import Any

from fastapi import FastAPI


def _free_form(schema: dict[str, Any], components: dict[str, Any]) -> bool:
    """An object without declared properties (or a list of such): what scripts cannot rely on."""
    if "$ref" in schema:
        return _free_form(components[schema["$ref"].rsplit("/", 1)[1]], components)
    if schema.get("type") == "array":
        return _free_form(schema.get("items", {}), components)
    if "anyOf" in schema:
        return any(_free_form(s, components) for s in schema["anyOf"] if s.get("type") != "null")
    if schema.get("type") == "object" or not schema:
        return not schema.get("properties")
    return False


def test_every_api_operation_has_a_typed_response(app: FastAPI) -> None:
    spec = app.openapi()
    components = spec["components"]["schemas"]
    untyped = []
    operations = 0
    for path, methods in spec["paths"].items():
        if not path.startswith("/api/v1"):
            continue
        for method, op in methods.items():
            operations += 1
            for code, response in op["responses"].items():
                if not code.startswith("2"):
                    continue
                for media, body in response.get("content", {}).items():
                    if media == "application/json" and _free_form(body.get("schema", {}), components):
                        untyped.append(f"{method.upper()} {path}")
    assert operations > 80
    assert untyped == []
