"""CSV files we hand out are opened in spreadsheets: a text cell that starts like a formula is neutralised.

A cell beginning with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return would be evaluated as a formula by
common spreadsheet programs (CSV or formula injection); such text cells get a leading apostrophe, the usual
neutralisation (OWASP "CSV Injection"). Numbers are written as numbers and never changed. Our own CSV imports
remove that apostrophe again, so an export imports back unchanged.
"""

from __future__ import annotations

import csv
from collections.abc import Iterable
from typing import Any, Protocol

FORMULA_LEADS = ("=", "+", "-", "@", "\t", "\r")


class _Writable(Protocol):
    def write(self, text: str, /) -> Any: ...


def escape_cell(value: Any) -> Any:
    """A text cell that would start a formula, prefixed with ``'``; anything else unchanged."""
    if isinstance(value, str) and value.startswith(FORMULA_LEADS):
        return "'" + value
    return value


def unescape_cell(text: str) -> str:
    """The inverse of :func:`escape_cell` for cells read back from our own exports."""
    if text.startswith("'") and text[1:].startswith(FORMULA_LEADS):
        return text[1:]
    return text


class SafeWriter:
    """``csv.writer`` with every cell passed through :func:`escape_cell`."""

    def __init__(self, out: _Writable) -> None:
        self._writer = csv.writer(out, lineterminator="\n")

    def writerow(self, row: Iterable[Any]) -> None:
        self._writer.writerow([escape_cell(v) for v in row])

    def writerows(self, rows: Iterable[Iterable[Any]]) -> None:
        for row in rows:
            self.writerow(row)


def csv_writer(out: _Writable) -> SafeWriter:
    """The writer for every CSV the app serves (parts export, bills of materials)."""
    return SafeWriter(out)
