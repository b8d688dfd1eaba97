"""Domain errors, raised by services, rendered once: RFC 9457 problem+json on the API, a page in the browser."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any


@dataclass
class FieldError:
    """One offending field: where it is (``field``, optional ``row``) and what is wrong."""

    field: str
    message: str
    row: int | None = None

    def as_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"field": self.field, "message": self.message}
        if self.row is not None:
            out["row"] = self.row
        return out


@dataclass
class DomainError(Exception):
    """Base class; ``status`` is the HTTP status it maps to."""

    detail: str
    errors: list[FieldError] = field(default_factory=list)
    status: int = 400
    title: str = "Bad request"

    def __str__(self) -> str:
        if not self.errors:
            return self.detail
        parts = "; ".join(
            (f"row {e.row}, " if e.row is not None else "") + f"{e.field}: {e.message}" for e in self.errors
        )
        return f"{self.detail}: {parts}"


class NotFound(DomainError):
    def __init__(self, detail: str = "Not found") -> None:
        super().__init__(detail, status=404, title="Not found")


class Forbidden(DomainError):
    def __init__(self, detail: str = "Not allowed") -> None:
        super().__init__(detail, status=403, title="Forbidden")


class Unauthorized(DomainError):
    def __init__(self, detail: str = "Authentication required") -> None:
        super().__init__(detail, status=401, title="Unauthorized")


class Conflict(DomainError):
    def __init__(self, detail: str, errors: list[FieldError] | None = None) -> None:
        super().__init__(detail, errors or [], status=409, title="Conflict")


class VersionMismatch(DomainError):
    """The client's If-Match version is not the stored one (someone else saved first)."""

    def __init__(self, detail: str) -> None:
        super().__init__(detail, status=412, title="Precondition failed")


class PreconditionRequired(DomainError):
    def __init__(self, detail: str) -> None:
        super().__init__(detail, status=428, title="Precondition required")


class InvalidInput(DomainError):
    def __init__(self, detail: str, errors: list[FieldError] | None = None) -> None:
        super().__init__(detail, errors or [], status=422, title="Invalid input")


def check_version(stored: int, expected: int | None, label: str) -> None:
    """The first half of optimistic concurrency: the client must name the version it edited, and it must be the
    one read now (the second half is the conditional UPDATE of ``models._common.Versioned``)."""
    if expected is None:
        raise PreconditionRequired(
            'Send the version you edited: the header If-Match: "<version>" (the ETag of your GET), '
            "or the query parameter ?version=<version>"
        )
    if expected != stored:
        raise VersionMismatch(
            f"This {label} was changed by someone else (now version {stored}, you sent {expected}); "
            "reload it and apply your change again"
        )


def problem(
    status: int, title: str, detail: str, errors: list[dict[str, Any]] | None = None, **extra: Any
) -> dict[str, Any]:
    """An RFC 9457 problem document."""
    body: dict[str, Any] = {"type": "about:blank", "title": title, "status": status, "detail": detail}
    if errors:
        body["errors"] = errors
    body.update(extra)
    return body
