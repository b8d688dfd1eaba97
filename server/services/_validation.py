"""Turn pydantic validation errors into our FieldError list, in our own plain words.

Every path that reports invalid input (API bodies and query parameters, forms, CSV rows, the CLI) goes through
:func:`plain_error`, so the same mistake reads the same everywhere.
"""

from __future__ import annotations

import json
import re
from collections.abc import Mapping, Sequence
from typing import Any

from pydantic import BaseModel, ValidationError

from server.errors import FieldError, InvalidInput

LOCATIONS = ("body", "query", "path", "header", "form")
# A message that a model-level rule starts with "field: " is about that field.
_FIELD_PREFIX = re.compile(r"^([a-z][a-z0-9_.]*): (.+)$", re.DOTALL)
# Field-specific wording where the generic one would not help.
FIELD_MESSAGES = {
    ("currency", "string_pattern_mismatch"): "must be a three-letter currency code in capitals, such as EUR or USD",
}


def _expected(ctx: Mapping[str, Any]) -> str:
    return str(ctx.get("expected", "")).replace("'", "")


def _message(err: Mapping[str, Any], field: str) -> str:
    """Our wording for one pydantic error (its type and context); unknown types keep pydantic's text."""
    kind = str(err.get("type", ""))
    ctx: Mapping[str, Any] = err.get("ctx") or {}
    leaf = field.rsplit(".", 1)[-1]
    if (leaf, kind) in FIELD_MESSAGES:
        return FIELD_MESSAGES[(leaf, kind)]
    words = {
        "missing": "required",
        "int_parsing": "must be a whole number",
        "int_type": "must be a whole number",
        "int_from_float": "must be a whole number",
        "float_parsing": "must be a number",
        "float_type": "must be a number",
        "finite_number": "must be a finite number",
        "bool_parsing": "must be yes or no (true or false)",
        "bool_type": "must be yes or no (true or false)",
        "string_type": "must be text",
        "string_pattern_mismatch": "has the wrong format",
        "literal_error": f"must be {_expected(ctx)}",
        "enum": f"must be {_expected(ctx)}",
        "extra_forbidden": "is not a field we know; check the spelling",
        "list_type": "must be a list",
        "dict_type": "must be an object",
        "model_type": "must be an object",
        "model_attributes_type": "must be an object",
        "json_invalid": "is not valid JSON",
        "json_type": "must be JSON",
        "string_too_long": f"must be at most {ctx.get('max_length')} characters long",
        "string_too_short": "must not be empty" if ctx.get("min_length") == 1
        else f"needs at least {ctx.get('min_length')} characters",
        "too_long": f"must have at most {ctx.get('max_length')} items",
        "too_short": f"must have at least {ctx.get('min_length')} items",
        "greater_than_equal": f"must be at least {ctx.get('ge')}",
        "greater_than": f"must be more than {ctx.get('gt')}",
        "less_than_equal": f"must be at most {ctx.get('le')}",
        "less_than": f"must be less than {ctx.get('lt')}",
    }
    if kind in words:
        return words[kind]
    return str(err.get("msg", "is not valid")).removeprefix("Value error, ")


def plain_error(err: Mapping[str, Any], *, skip_loc: int = 0) -> FieldError:
    """One pydantic error (an item of ``ValidationError.errors()``) as a FieldError in plain words."""
    loc = [str(p) for p in tuple(err.get("loc", ()))[skip_loc:] if p not in LOCATIONS]
    field = ".".join(loc)
    message = _message(err, field)
    nested = _FIELD_PREFIX.match(message) if field and err.get("type") == "value_error" else None
    if nested and "." not in nested.group(1):  # a nested model's rule ("segments.0" + "duration_s: ...")
        return FieldError(f"{field}.{nested.group(1)}", nested.group(2))
    if not field:  # a model-level rule: "field: message", or a message whose first word is the field
        match = _FIELD_PREFIX.match(message)
        if match:
            field, message = match.group(1), match.group(2)
        else:
            first = message.split(" ", 1)[0]
            field = first if "_" in first else "body"
    return FieldError(field, message)


def field_errors(exc: ValidationError, *, row: int | None = None, skip_loc: int = 0) -> list[FieldError]:
    out: list[FieldError] = []
    for err in exc.errors(include_url=False):
        plain = plain_error(err, skip_loc=skip_loc)
        out.append(FieldError(plain.field, plain.message, row))
    return out


def request_errors(errors: Sequence[Mapping[str, Any]]) -> list[dict[str, Any]]:
    """FastAPI's request validation errors (body, query, path) as problem+json ``errors`` items."""
    out = []
    for err in errors:
        plain = plain_error(err)
        out.append({"field": plain.field, "message": plain.message, "location": str(err.get("loc", ("",))[0])})
    return out


def validate(model: type[BaseModel], data: dict[str, Any], *, what: str) -> Any:
    try:
        return model.model_validate(data)
    except ValidationError as exc:
        raise InvalidInput(f"Invalid {what}", field_errors(exc)) from exc


def parse_json(text: str | bytes, *, field: str, row: int | None = None) -> Any:
    """JSON text from a user (a form field, a CSV cell, a file); any failure, including nesting too deep for the
    parser (RecursionError), is a 422 naming ``field``."""
    try:
        return json.loads(text)
    except json.JSONDecodeError as exc:
        raise InvalidInput("Invalid JSON", [FieldError(field, f"not JSON: {exc.msg} (position {exc.pos})", row)]) \
            from None
    except (RecursionError, ValueError) as exc:  # too deeply nested, or bytes that are not UTF-8
        message = "nested too deeply" if isinstance(exc, RecursionError) else "not UTF-8 JSON text"
        raise InvalidInput("Invalid JSON", [FieldError(field, message, row)]) from None
