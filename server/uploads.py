"""Read an uploaded file up to a limit and always close it (the temporary file must not leak)."""

from __future__ import annotations

from collections.abc import AsyncIterator

from fastapi import Request, UploadFile


def read_upload(file: UploadFile, limit: int) -> bytes:
    """At most ``limit + 1`` bytes (so a caller can tell "too large"), closing the file whatever happens."""
    try:
        return file.file.read(limit + 1)
    finally:
        file.file.close()


async def close_form(request: Request) -> AsyncIterator[None]:
    """Router dependency: close every uploaded file of the request's form once the request is done.

    FastAPI closes the files it binds to parameters; a file it never bound (a malformed request rejected during
    validation, an unexpected field) would otherwise leak its temporary file.
    """
    yield
    form = getattr(request, "_form", None)
    if form is not None:
        await form.close()
