"""Turn pydantic validation errors into our FieldError list."""

from __future__ import annotations

import json
from typing import Any

from pydantic import BaseModel, ValidationError

from server.errors import FieldError, InvalidInput


def field_errors(exc: ValidationError, *, row: int | None = None, skip_loc: int = 0) -> list[FieldError]:
    out: list[FieldError] = []
    for err in exc.errors(include_url=False):
        loc = [str(p) for p in err["loc"][skip_loc:]]
        message = str(err["msg"]).removeprefix("Value error, ")
        field = ".".join(loc)
        if not field:  # a model-level rule: its message starts with the field it is about
            field = message.split(" ", 1)[0] if "_" in message.split(" ", 1)[0] else "body"
        out.append(FieldError(field, message, row))
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
