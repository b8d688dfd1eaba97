"""Small HTTP helpers shared by the JSON routers."""

from __future__ import annotations

from typing import Any

from fastapi import Response

from server.errors import FieldError, InvalidInput


def parse_if_match(header: str | None, body_version: Any = None) -> int | None:
    """The version a client says it edited: ``If-Match: "3"`` (weak tags accepted) or ``?version=3``."""
    if header:
        tag = header.strip().removeprefix("W/").strip('"')
        if not (tag.isascii() and tag.isdigit() and len(tag) <= 18):
            raise InvalidInput("Bad If-Match header", [FieldError("If-Match", 'must be a version tag like "3"')])
        return int(tag)
    if body_version is None:
        return None
    if isinstance(body_version, bool) or not isinstance(body_version, int):
        raise InvalidInput("Bad version", [FieldError("version", "must be an integer")])
    return body_version


def set_etag(response: Response, version: int) -> None:
    response.headers["ETag"] = f'"{version}"'
