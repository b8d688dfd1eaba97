"""Turn pydantic validation errors into our FieldError list."""

from __future__ import annotations

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
