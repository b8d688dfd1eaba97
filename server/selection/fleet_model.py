"""The fleet plan as a mixed-integer linear programme for :func:`scipy.optimize.milp` (HiGHS).

Internal to :mod:`server.selection.fleet`; the public types and their validation live there.

Variables, in this order:

- ``x[m, c]`` (one per candidate of every mission, flattened): mission ``m`` flies candidate ``c``;
- ``y[p]`` (binary, one per distinct part, numbered across kinds so that equal ids of different kinds are
  different parts): part ``p`` is stocked;
- ``t`` (continuous, free; only for the ``endurance_margin`` metric): the fleet's worst margin [min].

Rows:

- assignment: ``sum_c x[m, c] = 1`` for every mission;
- linking, aggregated per mission: ``sum_{c in C_m(p)} x[m, c] <= y[p]`` for every mission ``m`` and every part
  ``p`` used by one of its candidates. Because a mission's candidates exclude each other (assignment row), this
  implies every disaggregated row ``x[m, c] <= y[p]``, so its LP relaxation is at least as tight, and it has
  one row per (mission, part) instead of four per candidate (benchmark: 111 rows instead of ~5 200);
- per-kind limits ``sum_{p in kind} y[p] <= L_kind`` (``one_battery`` is a battery limit of 1), optionally a
  total limit ``sum_p y[p] <= N`` (the trade-off curve);
- worst margin: ``t - sum_c margin[m, c] x[m, c] <= 0`` for every mission.

``x`` may be declared continuous: once ``y`` is integral a mission's feasible ``x`` are the simplex over its
candidates whose four parts are all stocked, so an optimal vertex is integral, and :func:`polish` turns any
solution into an integral assignment at least as good. Branching then happens on the few ``y`` only.
"""

from __future__ import annotations

import math
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from scipy import sparse
from scipy.optimize import Bounds, LinearConstraint, milp

KINDS: tuple[str, ...] = ("batteries", "escs", "motors", "propellers")
"""Part kinds, in the column order of :attr:`FleetProblem.part_of`."""

ID_FIELDS: tuple[str, ...] = ("battery_id", "esc_id", "motor_id", "propeller_id")
"""Candidate fields holding the part ids, in :data:`KINDS` order."""

Goal = Literal["plan", "parts", "feasibility"]


@dataclass(frozen=True)
class FleetProblem:
    """Index structure of a fleet instance (missions' candidates flattened, parts numbered across kinds).

    ``power_w``, ``margin_min`` and ``weight_of_x`` have one entry per candidate (``n_x``); ``offsets`` has
    ``M + 1`` entries, mission ``m`` owning ``x[offsets[m]:offsets[m + 1]]``; ``part_of`` is ``(n_x, 4)`` global
    part numbers; ``part_kind`` and ``part_ids`` describe the ``P`` parts; ``candidate_index`` maps ``x`` back to
    the candidate's index in its mission's input arrays.
    """

    offsets: np.ndarray
    mission_of_x: np.ndarray
    part_of: np.ndarray
    part_kind: np.ndarray
    part_ids: tuple[Any, ...]
    power_w: np.ndarray
    margin_min: np.ndarray
    weight_of_x: np.ndarray
    candidate_index: np.ndarray

    @property
    def n_missions(self) -> int:
        return int(self.offsets.shape[0] - 1)

    @property
    def n_x(self) -> int:
        return int(self.offsets[-1])

    @property
    def n_parts(self) -> int:
        return len(self.part_ids)


@dataclass(frozen=True)
class Solution:
    """Raw outcome of one solve; ``choice`` holds each mission's local candidate index (or is ``None``)."""

    status: int
    message: str
    choice: np.ndarray | None
    stocked: np.ndarray | None
    fun: float | None
    dual_bound: float | None
    mip_gap: float | None
    seconds: float


def build(ids: Sequence[Sequence[np.ndarray]], power_w: Sequence[np.ndarray], margin_min: Sequence[np.ndarray],
          weights: Sequence[float], candidate_index: Sequence[np.ndarray] | None = None) -> FleetProblem:
    """Number the parts and flatten the candidates of missions given as per-kind id arrays."""
    sizes = np.array([len(p) for p in power_w], dtype=np.intp)
    offsets = np.concatenate([[0], np.cumsum(sizes)]).astype(np.intp)
    n_x = int(offsets[-1])
    part_of = np.empty((n_x, len(KINDS)), dtype=np.intp)
    number: dict[tuple[int, Any], int] = {}
    part_kind: list[int] = []
    part_ids: list[Any] = []
    for k in range(len(KINDS)):
        for m, per_kind in enumerate(ids):
            col = per_kind[k]
            for i, raw in enumerate(col.tolist()):
                key = (k, raw)
                p = number.get(key)
                if p is None:
                    p = number[key] = len(part_ids)
                    part_kind.append(k)
                    part_ids.append(raw)
                part_of[offsets[m] + i, k] = p
    return FleetProblem(
        offsets=offsets, mission_of_x=np.repeat(np.arange(len(sizes)), sizes), part_of=part_of,
        part_kind=np.array(part_kind, dtype=np.intp), part_ids=tuple(part_ids),
        power_w=np.concatenate(power_w).astype(float), margin_min=np.concatenate(margin_min).astype(float),
        weight_of_x=np.repeat(np.asarray(weights, dtype=float), sizes),
        candidate_index=(np.concatenate([np.arange(n) for n in sizes]) if candidate_index is None
                         else np.concatenate(candidate_index)).astype(np.intp),
    )


def undominated(ids: Sequence[np.ndarray], value: np.ndarray) -> np.ndarray:
    """Indices (ascending) of the candidates worth keeping: per distinct four-part tuple, the lowest ``value``.

    Candidates with the same four parts (they differ in packs in parallel) use the same stocked parts, so only
    the best of them can be in an optimal plan, and :func:`polish` would pick it anyway (ties: lowest index).
    """
    order = np.lexsort((np.arange(value.size), value))
    seen: set[tuple[Any, ...]] = set()
    keep = []
    columns = [np.asarray(a).tolist() for a in ids]
    for i in order.tolist():
        key = tuple(col[i] for col in columns)
        if key not in seen:
            seen.add(key)
            keep.append(i)
    return np.sort(np.array(keep, dtype=np.intp))


def from_missions(missions: Sequence[Any], metric: str) -> FleetProblem:
    """:func:`build` from validated ``MissionCandidates`` (duck-typed to avoid an import cycle), keeping only
    the :func:`undominated` candidates by ``metric``."""
    ids, power, margin, keep = [], [], [], []
    for m in missions:
        per_kind = [getattr(m, f) for f in ID_FIELDS]
        index = undominated(per_kind, m.cruise_power_w if metric == "cruise_energy" else -m.margin_min)
        keep.append(index)
        ids.append([a[index] for a in per_kind])
        power.append(m.cruise_power_w[index])
        margin.append(m.margin_min[index])
    return build(ids, power, margin, [m.weight for m in missions], keep)


def original(problem: FleetProblem, choice: np.ndarray) -> np.ndarray:
    """Input candidate index of each mission's choice (``choice`` holds positions within the problem)."""
    index: np.ndarray = problem.candidate_index[problem.offsets[:-1] + choice]
    return index


def _linking(problem: FleetProblem) -> sparse.csr_array:
    """Rows ``sum_{c in C_m(p)} x[m, c] - y[p] <= 0``, one per (mission, part used by that mission)."""
    n_x, n_p = problem.n_x, problem.n_parts
    rows, cols, vals = [], [], []
    n_rows = 0
    for k in range(len(KINDS)):
        key = problem.mission_of_x * n_p + problem.part_of[:, k]
        unique, inverse = np.unique(key, return_inverse=True)
        rows += [n_rows + inverse, n_rows + np.arange(unique.size)]
        cols += [np.arange(n_x), n_x + unique % n_p]
        vals += [np.ones(n_x), -np.ones(unique.size)]
        n_rows += unique.size
    return sparse.csr_array((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                            shape=(n_rows, n_x + n_p))


def solve(problem: FleetProblem, *, metric: str, limits: Mapping[str, int | None], total_limit: int | None = None,
          stocking_cost: float = 0.0, goal: Goal = "plan", integral_x: bool | None = None,
          time_limit_s: float | None = None, mip_rel_gap: float = 1e-7) -> Solution:
    """Build and solve the MILP; ``goal`` ``"parts"`` minimises the stocked count, ``"feasibility"`` has no cost.

    For ``goal="plan"`` the minimised function is ``sum weight * power + stocking_cost * sum y`` (cruise_energy)
    or ``-t + stocking_cost * sum y`` (endurance_margin). ``integral_x`` defaults to ``True`` only for the
    worst-margin plan: there the max-min rows have a weak relaxation and branching on ``x`` as well measured
    1.2-2.3x faster on the benchmark; for the other goals continuous ``x`` measured 1.2-2.5x faster.
    """
    started = time.perf_counter()
    n_x, n_p, n_m = problem.n_x, problem.n_parts, problem.n_missions
    with_t = goal == "plan" and metric == "endurance_margin"
    n_var = n_x + n_p + int(with_t)

    c = np.zeros(n_var)
    if goal == "plan":
        c[n_x:n_x + n_p] = stocking_cost
        if metric == "cruise_energy":
            c[:n_x] = problem.weight_of_x * problem.power_w
        else:
            c[-1] = -1.0
    elif goal == "parts":
        c[n_x:n_x + n_p] = 1.0

    blocks: list[sparse.csr_array] = []
    lower: list[np.ndarray] = []
    upper: list[np.ndarray] = []

    assign = sparse.csr_array((np.ones(n_x), (problem.mission_of_x, np.arange(n_x))), shape=(n_m, n_var))
    blocks.append(assign)
    lower.append(np.ones(n_m))
    upper.append(np.ones(n_m))

    link = _linking(problem)
    link.resize((link.shape[0], n_var))
    blocks.append(link)
    lower.append(np.full(link.shape[0], -np.inf))
    upper.append(np.zeros(link.shape[0]))

    limit_rows: list[tuple[np.ndarray, float]] = []
    for k, kind in enumerate(KINDS):
        limit = limits.get(kind)
        if limit is not None:
            limit_rows.append((problem.part_kind == k, float(limit)))
    if total_limit is not None:
        limit_rows.append((np.ones(n_p, dtype=bool), float(total_limit)))
    if limit_rows:
        dense = np.zeros((len(limit_rows), n_var))
        for r, (mask, _) in enumerate(limit_rows):
            dense[r, n_x:n_x + n_p] = mask
        blocks.append(sparse.csr_array(dense))
        lower.append(np.full(len(limit_rows), -np.inf))
        upper.append(np.array([limit for _, limit in limit_rows]))

    if with_t:
        worst = sparse.csr_array(
            (np.concatenate([-problem.margin_min, np.ones(n_m)]),
             (np.concatenate([problem.mission_of_x, np.arange(n_m)]), np.concatenate([np.arange(n_x),
                                                                                       np.full(n_m, n_var - 1)]))),
            shape=(n_m, n_var))
        blocks.append(worst)
        lower.append(np.full(n_m, -np.inf))
        upper.append(np.zeros(n_m))

    integrality = np.ones(n_var)
    if integral_x is None:
        integral_x = with_t
    if not integral_x:
        integrality[:n_x] = 0
    lb = np.zeros(n_var)
    ub = np.ones(n_var)
    if with_t:
        integrality[-1] = 0
        lb[-1], ub[-1] = -np.inf, np.inf
    options: dict[str, Any] = {"mip_rel_gap": mip_rel_gap}
    if time_limit_s is not None:
        options["time_limit"] = time_limit_s
    res = milp(c, integrality=integrality, bounds=Bounds(lb, ub),
               constraints=LinearConstraint(sparse.vstack(blocks, format="csr"), np.concatenate(lower),
                                            np.concatenate(upper)),
               options=options)
    seconds = time.perf_counter() - started
    if res.x is None:
        return Solution(int(res.status), str(res.message), None, None, None, None, None, seconds)
    stocked = res.x[n_x:n_x + n_p] > 0.5
    x = res.x[:n_x]
    choice = np.array([int(np.argmax(x[problem.offsets[m]:problem.offsets[m + 1]])) for m in range(n_m)])
    fun = float(res.fun)
    dual = getattr(res, "mip_dual_bound", None)
    dual = None if dual is None or not math.isfinite(dual) else float(dual)
    gap = getattr(res, "mip_gap", None)
    if gap is None and dual is not None:
        gap = abs(fun - dual) / max(abs(fun), 1e-12)
    return Solution(int(res.status), str(res.message), choice, stocked, fun, dual,
                    None if gap is None else float(gap), seconds)


def polish(problem: FleetProblem, solution: Solution, metric: str) -> np.ndarray:
    """Each mission's best candidate among those whose four parts are all stocked (ties: lowest index).

    The solver's own choice is always allowed, so the result is at least as good for every mission; it makes
    the plan deterministic and, for ``endurance_margin``, gives each mission its best margin within the stocked
    parts rather than just any candidate above the worst margin.
    """
    assert solution.stocked is not None and solution.choice is not None
    allowed = solution.stocked[problem.part_of].all(axis=1)
    value = problem.power_w if metric == "cruise_energy" else -problem.margin_min
    choice = np.empty(problem.n_missions, dtype=np.intp)
    for m in range(problem.n_missions):
        lo, hi = problem.offsets[m], problem.offsets[m + 1]
        ok = allowed[lo:hi]
        if not ok.any():  # only if the solver's stocked set is inconsistent (tolerances): keep its choice
            choice[m] = solution.choice[m]
            continue
        choice[m] = int(np.argmin(np.where(ok, value[lo:hi], np.inf)))
    return choice


def used_parts(problem: FleetProblem, choice: np.ndarray) -> np.ndarray:
    """Boolean mask over parts: used by the assignment ``choice`` (local candidate index per mission)."""
    used = np.zeros(problem.n_parts, dtype=bool)
    used[problem.part_of[problem.offsets[:-1] + choice].ravel()] = True
    return used
