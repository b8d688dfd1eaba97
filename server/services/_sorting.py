"""Natural order for names and part numbers: "5x2.5" before "13x4.4" before "30x10", case ignored."""

from __future__ import annotations

import re
from collections.abc import Callable, Iterable
from typing import Any, TypeVar

T = TypeVar("T")
_CHUNKS = re.compile(r"(\d+(?:\.\d+)?)")


def natural_key(text: str | None) -> tuple[tuple[int, float, str], ...]:
    """Text split into numbers (compared by value) and words (compared without case); None sorts first."""
    out = []
    for i, chunk in enumerate(_CHUNKS.split((text or "").strip())):
        if i % 2:
            out.append((0, float(chunk), ""))
        elif chunk:
            out.append((1, 0.0, chunk.casefold()))
    return tuple(out)


def naturally(items: Iterable[T], key: Callable[[T], Any], *, reverse: bool = False) -> list[T]:
    """``items`` sorted by the natural order of ``key(item)`` (stable, so ties keep their order)."""
    return sorted(items, key=lambda item: natural_key(key(item)), reverse=reverse)
