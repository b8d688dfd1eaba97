"""Field builders: physical bounds with messages that name the allowed range and unit."""

from __future__ import annotations

import math
import typing
from typing import Annotated, Any

from pydantic import AfterValidator, BaseModel, Field, create_model
from pydantic.config import JsonDict
from pydantic.fields import FieldInfo


def _fmt(value: float) -> str:
    if isinstance(value, int) and value.bit_length() > 53:  # beyond a float: do not convert (it may overflow)
        return f"a number of about {int(value.bit_length() * 0.30103) + 1} digits"
    return f"{value:g}"


# C0 control characters other than tab, newline and carriage return: never meaningful in our text, and
# PostgreSQL refuses NUL in text columns (a 500 before this check).
_CONTROL = {chr(c) for c in range(32)} - {"\t", "\n", "\r"}


def ranged(tp: type, lo: float, hi: float, unit: str, *, description: str = "", title: str | None = None) -> Any:
    """``tp`` constrained to ``lo..hi`` [unit]; NaN/inf rejected; the error names the range."""

    def check(value: Any) -> Any:
        if value is None:
            return value
        if isinstance(value, float) and not math.isfinite(value):
            raise ValueError("must be a finite number")
        if not lo <= value <= hi:
            raise ValueError(f"must be between {_fmt(lo)} and {_fmt(hi)} {unit} (got {_fmt(value)})".strip())
        return value

    extra: JsonDict = {"minimum": lo, "maximum": hi, "x-unit": unit}
    return Annotated[
        tp,
        AfterValidator(check),
        Field(description=f"{description} [{unit}]".strip(), title=title, json_schema_extra=extra),
    ]


def text(max_length: int, *, description: str = "", min_length: int = 0) -> Any:
    def strip(value: str | None) -> str | None:
        if value is None:  # only reachable through the partial (update) schemas, where None = unchanged
            return value
        value = value.strip()
        if not _CONTROL.isdisjoint(value):
            raise ValueError("must not contain control characters (such as NUL)")
        if len(value) < min_length:
            raise ValueError("must not be empty" if min_length == 1 else f"needs at least {min_length} characters")
        return value

    return Annotated[str, Field(max_length=max_length, description=description), AfterValidator(strip)]


def field_meta(info: FieldInfo) -> tuple[dict[str, Any], str]:
    """The ``ranged`` bounds/unit dict and description of a field, also when it is ``ranged(...) | None``."""
    if isinstance(info.json_schema_extra, dict):
        return dict(info.json_schema_extra), info.description or ""
    for arg in typing.get_args(info.annotation):
        for meta in getattr(arg, "__metadata__", ()):
            if isinstance(meta, FieldInfo) and isinstance(meta.json_schema_extra, dict):
                return dict(meta.json_schema_extra), meta.description or ""
    return {}, info.description or ""


def unit_of(model: type[BaseModel], name: str) -> str:
    """The unit declared for a field (empty when it has none)."""
    return str(field_meta(model.model_fields[name])[0].get("x-unit", ""))


def partial_model(model: type[BaseModel], name: str) -> type[BaseModel]:
    """A copy of ``model`` whose fields are all optional (``None`` = leave unchanged)."""
    fields: dict[str, Any] = {}
    for field_name, info in model.model_fields.items():
        annotation: Any = info.annotation
        optional: Any = annotation | None
        if info.metadata:
            optional = Annotated[optional, *info.metadata]
        fields[field_name] = (
            optional,
            Field(default=None, description=info.description, json_schema_extra=info.json_schema_extra),
        )
    return create_model(name, __config__=model.model_config, **fields)
