"""Edit forms (parts, airframes, missions): save with the version the form was loaded with; a conflict stays one.

The form carries the version it was loaded with. When someone else saved first, nothing is saved and the page
shows both values of every field that differs; the form keeps the *old* version, so saving again is again a
conflict, until the user reloads (their changes dropped) or presses "overwrite", which sends the version they
have now seen (``overwrite=<version>``) — and is itself a conflict if a third save came in between.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from server.errors import DomainError, InvalidInput, VersionMismatch
from server.pages._forms import FormField, values_of


@dataclass
class EditOutcome:
    """Why an edit was not saved: field errors, a message for the form, and whether it was a version conflict."""

    errors: dict[str, str] = field(default_factory=dict)
    message: str = ""
    conflict: bool = False

    @property
    def status(self) -> int:
        return 409 if self.message else 422


@dataclass
class EditConflict:
    """Someone saved first: the version the form started from, the stored one, and the fields that differ."""

    yours: int
    version: int
    rows: list[tuple[str, str, str]]  # (label, your value, the saved value)


def form_version(values: dict[str, str]) -> int:
    """The version an edit form was loaded with (0 when missing or garbled: the save then reports a conflict)."""
    raw = values.get("version", "")
    return int(raw) if raw.isdigit() else 0


def expected_version(values: dict[str, str]) -> int:
    """The version to save against: the one the user chose to overwrite after a conflict, else the form's."""
    raw = values.get("overwrite", "")
    return int(raw) if raw.isdigit() else form_version(values)


def save_edit(session: Any, form_errors: dict[str, str], save: Callable[[], object]) -> EditOutcome | None:
    """Run ``save`` and commit unless the form already has errors; None when saved, else why not (rolled back)."""
    if form_errors:
        return EditOutcome(form_errors)
    try:
        save()
        session.commit()
        return None
    except InvalidInput as exc:
        session.rollback()
        return EditOutcome({e.field: e.message for e in exc.errors})
    except VersionMismatch as exc:
        session.rollback()
        return EditOutcome({}, exc.detail, conflict=True)
    except DomainError as exc:
        session.rollback()
        return EditOutcome({}, exc.detail)


def _same(a: str, b: str) -> bool:
    a, b = a.strip(), b.strip()
    try:
        return float(a) == float(b)
    except ValueError:
        return a.replace("\r\n", "\n") == b.replace("\r\n", "\n")


def edit_conflict(fields: list[FormField], values: dict[str, str], stored: Any, extra: tuple[str, ...] = ()
                  ) -> EditConflict:
    """Both values of every field where the submitted form and the stored row differ."""
    saved = values_of(stored, fields) | {name: str(getattr(stored, name)) for name in extra}
    labels = {f.name: f.label for f in fields} | {name: name.replace("_id", "").replace("_", " ").capitalize()
                                                  for name in extra}
    rows = [(labels[name], values.get(name, ""), saved[name]) for name in labels
            if name in values and not _same(values.get(name, ""), saved[name])]
    return EditConflict(form_version(values), int(stored.version), rows)
