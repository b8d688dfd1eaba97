"""numba compilation for the ranking's hot loops (:mod:`.fused_screen`, :mod:`.pareto`).

Nopython mode, cached on disk (``cache=True``: compiled once per installation, then loaded in about 0.3 s per
process), IEEE semantics: no fast-math (no contraction into fused multiply-adds, no reordering), and numpy's
error model (a division by zero gives inf or NaN, as in the numpy code it replaces).
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any, TypeVar

import numba

F = TypeVar("F", bound=Callable[..., Any])


def jit(function: F) -> F:
    """``function`` compiled by numba (on first call, or loaded from the on-disk cache)."""
    compiled: F = numba.njit(cache=True, error_model="numpy", nogil=True)(function)  # type: ignore[assignment]
    return compiled
