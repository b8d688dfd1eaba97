"""Pareto set over (endurance max, thrust-to-weight max, all-up mass min, cost min), kept while streaming.

A candidate is dominated when another is at least as good in all four objectives and better in one. The set
of non-dominated candidates is unique, so merging chunk by chunk (or worker by worker) gives the same set in
any order. Each merge first removes what a few "elite" points dominate (minimisers of fixed weighted sums,
cheap to find), then compares the few survivors pairwise (compiled loops that stop at the first dominator).
Unknown costs count as the worst cost.
"""

from __future__ import annotations

import math

import numpy as np

from .compiled import jit
from .result import CandidateSet

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

    Each point scans ``by`` in order and stops at its first dominator, so putting the strongest rows of ``by``
    first makes this close to linear in n (compiled: :func:`_dominated_loop`).
    """
    out = np.zeros(points.shape[0], dtype=np.bool_)
    if points.shape[0] and by.shape[0]:
        _dominated_loop(np.ascontiguousarray(points, dtype=np.float64), np.ascontiguousarray(by, dtype=np.float64),
                        out)
    return out


@jit
def _dominated_loop(points: np.ndarray, by: np.ndarray, out: np.ndarray) -> None:
    for i in range(points.shape[0]):
        p0, p1, p2, p3 = points[i, 0], points[i, 1], points[i, 2], points[i, 3]
        for j in range(by.shape[0]):
            b0, b1, b2, b3 = by[j, 0], by[j, 1], by[j, 2], by[j, 3]
            if (b0 <= p0 and b1 <= p1 and b2 <= p2 and b3 <= p3) and (b0 < p0 or b1 < p1 or b2 < p2 or b3 < p3):
                out[i] = True
                break


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
    found = np.zeros(_WEIGHTS.shape[0], dtype=np.intp)
    if x.shape[0]:
        _weighted_minimisers(np.ascontiguousarray(x, dtype=np.float64), lo, span, _WEIGHTS, found)
    return np.unique(found)


@jit
def _weighted_minimisers(x: np.ndarray, lo: np.ndarray, span: np.ndarray, weights: np.ndarray,
                         found: np.ndarray) -> None:
    """Per row of ``weights``, the first row of ``x`` minimising the weighted sum of ``(x - lo) / span`` (a
    non-finite objective counts as 2, worse than any finite one)."""
    best = np.full(weights.shape[0], np.inf)
    z = np.empty(4)
    for i in range(x.shape[0]):
        for c in range(4):
            v = x[i, c]
            z[c] = (v - lo[c]) / span[c] if math.isfinite(v) else 2.0
        for w in range(weights.shape[0]):
            total = weights[w, 0] * z[0] + weights[w, 1] * z[1] + weights[w, 2] * z[2] + weights[w, 3] * z[3]
            if total < best[w]:
                best[w] = total
                found[w] = i


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
