"""Pareto set over (endurance max, thrust-to-weight max, all-up mass min, cost min), kept while streaming.

A candidate is dominated when another is at least as good in all four objectives and better in one. The set
of non-dominated candidates is unique, so merging chunk by chunk (or worker by worker) gives the same set in
any order. Each merge first removes what a few "elite" points dominate (minimisers of fixed weighted sums,
cheap to find), then compares the few survivors pairwise, in blocks to bound memory. Unknown costs count as
the worst cost.
"""

from __future__ import annotations

import numpy as np

from .result import CandidateSet

_BLOCK = 16
_WEIGHTS = np.array([
    [1, 0, 0, 0], [0, 1, 0, 0], [0, 0, 1, 0], [0, 0, 0, 1], [1, 1, 1, 1],
    [2, 1, 1, 1], [1, 2, 1, 1], [1, 1, 2, 1], [1, 1, 1, 2], [3, 1, 2, 0.5],
    [1, 3, 0.5, 2], [0.5, 2, 3, 1], [2, 0.5, 1, 3], [1, 1, 0, 0], [0, 0, 1, 1], [1, 0, 1, 0],
], dtype=np.float64)


def objective_matrix(cs: CandidateSet) -> np.ndarray:
    """Objectives as an (n, 4) matrix to minimise: -endurance, -thrust-to-weight, mass, cost (NaN = +inf)."""
    cost = np.where(np.isnan(cs.cost), np.inf, cs.cost)
    return np.column_stack([-cs.endurance_min, -cs.thrust_to_weight, cs.mass_kg, cost])


def _dominated_by(points: np.ndarray, by: np.ndarray) -> np.ndarray:
    """Mask of ``points`` (n, 4) dominated by at least one row of ``by`` (m, 4).

    ``by`` is scanned in small blocks and points already known to be dominated leave the scan, so putting the
    strongest rows of ``by`` first makes this close to linear in n.
    """
    n = points.shape[0]
    out = np.zeros(n, dtype=bool)
    if n == 0 or by.shape[0] == 0:
        return out
    active = np.arange(n)
    cols = np.ascontiguousarray(points.T)
    for start in range(0, by.shape[0], _BLOCK):
        b = by[start:start + _BLOCK]
        p = cols[:, active]
        weak = b[:, 0, None] <= p[0]
        strict = b[:, 0, None] < p[0]
        for j in range(1, 4):
            weak &= b[:, j, None] <= p[j]
            strict |= b[:, j, None] < p[j]
        hit = np.any(weak & strict, axis=0)
        out[active[hit]] = True
        active = active[~hit]
        if active.size == 0:
            break
    return out


def _strongest_first(x: np.ndarray) -> np.ndarray:
    """Rows of ``x`` ordered by their normalised objective sum (likely dominators first)."""
    if x.shape[0] == 0:
        return x
    lo = np.min(np.where(np.isfinite(x), x, np.inf), axis=0)
    hi = np.max(np.where(np.isfinite(x), x, -np.inf), axis=0)
    with np.errstate(invalid="ignore"):  # a column without any finite value (e.g. every cost unknown): inf - inf
        span = np.where(hi > lo, hi - lo, 1.0)
        z = np.where(np.isfinite(x), (x - lo) / span, 2.0)
    return x[np.argsort(z.sum(axis=1), kind="stable")]


def _elites(x: np.ndarray) -> np.ndarray:
    """Indices of minimisers of a few positive weighted sums of the normalised objectives."""
    finite = np.where(np.isfinite(x), x, np.nan)
    with np.errstate(invalid="ignore"):
        lo = np.nanmin(finite, axis=0, initial=np.inf, where=~np.isnan(finite))
        hi = np.nanmax(finite, axis=0, initial=-np.inf, where=~np.isnan(finite))
        span = np.where(hi > lo, hi - lo, 1.0)
        z = np.where(np.isfinite(x), (x - lo) / span, 2.0)  # a column without any finite value: inf - inf
    return np.unique(np.argmin(z @ _WEIGHTS.T, axis=0))


def nondominated(x: np.ndarray) -> np.ndarray:
    """Indices (ascending) of the rows of ``x`` (n, 4; lower is better) that no other row dominates."""
    n = x.shape[0]
    if n == 0:
        return np.empty(0, dtype=np.intp)
    keep = np.arange(n)
    elites = x[_elites(x)]
    keep = keep[~_dominated_by(x, elites)]
    y = x[keep]
    front: np.ndarray = keep[~_dominated_by(y, _strongest_first(y))]
    return front


class ParetoFront:
    """The non-dominated set of every candidate added so far."""

    def __init__(self) -> None:
        self.members = CandidateSet.empty()

    def add(self, cs: CandidateSet) -> None:
        """Merge feasible candidates ``cs`` into the front."""
        if len(cs) == 0:
            return
        front = objective_matrix(self.members)
        new = objective_matrix(cs)
        # Any candidate may serve as a filter (domination is transitive): first the elites, then the front.
        elites = np.concatenate([front, new])[_elites(np.concatenate([front, new]))]
        keep = np.flatnonzero(~_dominated_by(new, elites))
        keep = keep[~_dominated_by(new[keep], _strongest_first(front))]
        keep = keep[nondominated(new[keep])]
        if keep.size == 0:
            return
        stay = np.flatnonzero(~_dominated_by(front, new[keep]))
        self.members = CandidateSet.concat(self.members.take(stay), cs.take(keep))

    def merge(self, other: ParetoFront) -> None:
        self.add(other.members)
