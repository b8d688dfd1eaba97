"""Fleet plan: which power systems a fleet's missions should fly so that it stocks few part numbers.

Pure numpy + :func:`scipy.optimize.milp` (HiGHS); no DB, no I/O. Each mission brings its top ``K`` feasible
candidates (battery pack x ESC x motor x propeller, ``k`` packs in parallel) from its own ranking; the plan picks
one candidate per mission and the set of stocked part numbers. See :mod:`.fleet_model` for the formulation and
:mod:`.fleet_explain` for the infeasibility explanation.

Metrics (``FleetOptions.metric``):

``"cruise_energy"`` (minimised)
    ``objective = sum_m weight_m * cruise_power_w(m) + stocking_cost * part_numbers`` [W, i.e. W h per flight hour
    when the weight is flight hours]. ``metric_value`` is the assigned candidate's craft cruise power [W].
``"endurance_margin"`` (maximised)
    margin of a mission = ``endurance_min - min_endurance_min`` [min], an absolute margin (minutes of reserve
    are what a pilot plans with; a relative margin would rate a 2-minute reserve on a 10-minute mission like a
    12-minute one on a 60-minute mission). ``objective = min_m margin_m - stocking_cost * part_numbers``
    [min]. The weights do not scale it: the worst margin is a per-flight safety figure, not a fleet total.

``loss_vs_own_best`` is always >= 0 and says how much worse the assigned candidate is than the mission's own best:
``cruise_power_w - best_cruise_power_w`` [W] or ``best_margin - margin`` [min]; for ``cruise_energy``
``loss_vs_own_best_weighted`` is ``weight x`` that [W].
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import asdict, dataclass
from typing import Any, TypedDict

import numpy as np

from . import fleet_model as fm
from .fleet_explain import Infeasibility, explain
from .fleet_inputs import METRICS, FleetOptions, Metric, MissionCandidates
from .fleet_model import KINDS

_STATUS = {0: "optimal", 1: "limit_reached", 2: "infeasible", 3: "unbounded", 4: "error"}

__all__ = ["KINDS", "METRICS", "Assignment", "FleetOptions", "FleetResult", "Infeasibility", "Metric",
           "MissionCandidates", "TradeoffPoint", "optimise", "tradeoff"]


def _py(value: Any) -> Any:
    return value.item() if isinstance(value, np.generic) else value


def _sorted_ids(ids: Iterable[Any]) -> list[Any]:
    ids = [_py(i) for i in ids]
    try:
        return sorted(ids)
    except TypeError:
        return sorted(ids, key=repr)


@dataclass(frozen=True)
class Assignment:
    """The candidate one mission flies in the plan (``metric_value`` and losses in the metric's units)."""

    mission_id: Any
    candidate_index: int
    battery_id: Any
    esc_id: Any
    motor_id: Any
    propeller_id: Any
    packs_in_parallel: int
    metric_value: float
    own_best: float
    loss_vs_own_best: float
    loss_vs_own_best_weighted: float | None
    cruise_power_w: float
    endurance_min: float
    margin_min: float
    weight: float


@dataclass(frozen=True)
class FleetResult:
    """Outcome of :func:`optimise`.

    ``objective`` includes the stocking cost, ``fleet_metric`` does not (``sum weight x power`` [W] or the worst
    margin [min]). ``dual_bound`` is the solver's bound on ``objective`` (same sense); ``mip_gap`` is HiGHS' relative
    gap. ``status`` is ``"optimal"``, ``"limit_reached"`` (a plan, not proven optimal, or none found in time),
    ``"infeasible"`` (then ``infeasibility`` explains it) or ``"error"``.
    """

    status: str
    message: str
    metric: str
    objective: float | None
    fleet_metric: float | None
    part_numbers: int
    stocking_total: float
    dual_bound: float | None
    mip_gap: float | None
    assignments: tuple[Assignment, ...]
    stocked: dict[str, list[Any]]
    solve_time_s: float
    infeasibility: Infeasibility | None = None

    def as_dict(self) -> dict[str, Any]:
        """JSON-ready dict (contract names: objective, assignments[...], stocked{kind: ids})."""
        return asdict(self)


@dataclass(frozen=True)
class TradeoffPoint:
    """One point of the price-of-commonality curve: the best plan stocking at most ``part_numbers`` parts.

    ``objective`` excludes the stocking cost (``sum weight x power`` [W], lower is better, or the worst margin
    [min], higher is better); ``objective_with_stocking`` adds (cruise_energy) or subtracts (endurance_margin)
    ``stocking_cost x parts_used``. ``parts_used <= part_numbers``.
    """

    part_numbers: int
    objective: float | None
    objective_with_stocking: float | None
    parts_used: int
    status: str
    mip_gap: float | None
    assignments: tuple[Assignment, ...]
    stocked: dict[str, list[Any]]
    solve_time_s: float

    def as_dict(self) -> dict[str, Any]:
        return asdict(self)


def _check(missions: Sequence[MissionCandidates], options: FleetOptions) -> None:
    if not isinstance(options, FleetOptions):
        raise ValueError(f"options must be a FleetOptions, got {type(options).__name__}")
    if len(missions) == 0:
        raise ValueError("missions: at least one mission is required")
    seen: set[Any] = set()
    for m in missions:
        if not isinstance(m, MissionCandidates):
            raise ValueError(f"missions: expected MissionCandidates, got {type(m).__name__}")
        if m.mission_id in seen:
            raise ValueError(f"missions: mission_id {m.mission_id!r} appears twice")
        seen.add(m.mission_id)


def _assignments(missions: Sequence[MissionCandidates], choice: np.ndarray, metric: str) -> tuple[Assignment, ...]:
    out = []
    for m, c in zip(missions, choice.tolist(), strict=True):
        power, margin = float(m.cruise_power_w[c]), float(m.margin_min[c])
        best = m.own_best(metric)
        value = power if metric == "cruise_energy" else margin
        loss = value - best if metric == "cruise_energy" else best - value
        out.append(Assignment(
            mission_id=m.mission_id, candidate_index=int(c), battery_id=_py(m.battery_id[c]),
            esc_id=_py(m.esc_id[c]), motor_id=_py(m.motor_id[c]), propeller_id=_py(m.propeller_id[c]),
            packs_in_parallel=int(m.packs_in_parallel[c]), metric_value=value, own_best=best, loss_vs_own_best=loss,
            loss_vs_own_best_weighted=m.weight * loss if metric == "cruise_energy" else None,
            cruise_power_w=power, endurance_min=float(m.endurance_min[c]), margin_min=margin, weight=m.weight))
    return tuple(out)


def _fleet_metric(missions: Sequence[MissionCandidates], choice: np.ndarray, metric: str) -> float:
    if metric == "cruise_energy":
        return float(sum(m.weight * float(m.cruise_power_w[c]) for m, c in zip(missions, choice.tolist(),
                                                                              strict=True)))
    return float(min(float(m.margin_min[c]) for m, c in zip(missions, choice.tolist(), strict=True)))


def _stocked(problem: fm.FleetProblem, used: np.ndarray) -> dict[str, list[Any]]:
    return {kind: _sorted_ids(problem.part_ids[p] for p in np.flatnonzero(used & (problem.part_kind == k)))
            for k, kind in enumerate(KINDS)}


def _with_stocking(value: float, parts: int, options: FleetOptions) -> float:
    sign = 1.0 if options.metric == "cruise_energy" else -1.0
    return value + sign * options.stocking_cost * parts


def _status(solution: fm.Solution) -> str:
    return _STATUS.get(solution.status, "error")


def optimise(missions: Sequence[MissionCandidates], options: FleetOptions) -> FleetResult:
    """The fleet plan that optimises the metric plus stocking cost under the options (exact MILP).

    Parameters
    ----------
    missions : sequence of MissionCandidates
        The fleet's missions, each with its candidates (at least one mission, unique ids).
    options : FleetOptions
        Metric, one-battery option, per-kind limits, stocking cost, solver limits.

    Returns
    -------
    FleetResult
        Optimum, status and gap, one :class:`Assignment` per mission (in input order), stocked part ids per kind
        (only the parts the assignment uses), solve time [s]. When no plan exists, ``status == "infeasible"`` and
        ``infeasibility`` names the conflicting missions and the binding constraints.

    Raises
    ------
    ValueError
        Bad input, naming the field (no missions, duplicate mission ids, wrong types).
    """
    _check(missions, options)
    problem = fm.from_missions(missions, options.metric)
    solution = fm.solve(problem, metric=options.metric, limits=options.limits(), stocking_cost=options.stocking_cost,
                        time_limit_s=options.time_limit_s, mip_rel_gap=options.mip_rel_gap)
    status = _status(solution)
    if solution.choice is None:
        infeasibility = explain(missions, options, problem) if status == "infeasible" else None
        return FleetResult(status=status, message=solution.message, metric=options.metric, objective=None,
                           fleet_metric=None, part_numbers=0, stocking_total=0.0, dual_bound=None, mip_gap=None,
                           assignments=(), stocked={k: [] for k in KINDS}, solve_time_s=solution.seconds,
                           infeasibility=infeasibility)
    choice = fm.polish(problem, solution, options.metric)
    used = fm.used_parts(problem, choice)
    parts = int(used.sum())
    index = fm.original(problem, choice)
    fleet_metric = _fleet_metric(missions, index, options.metric)
    dual = solution.dual_bound
    if dual is not None and options.metric == "endurance_margin":
        dual = -dual  # the solver minimised -t + cost; report the bound in the maximised sense
    return FleetResult(
        status=status, message=solution.message, metric=options.metric,
        objective=_with_stocking(fleet_metric, parts, options), fleet_metric=fleet_metric, part_numbers=parts,
        stocking_total=options.stocking_cost * parts, dual_bound=dual, mip_gap=solution.mip_gap,
        assignments=_assignments(missions, index, options.metric), stocked=_stocked(problem, used),
        solve_time_s=solution.seconds)


class _CommonSolveArgs(TypedDict):
    """Keyword arguments of :func:`fleet_model.solve` shared by every solve of :func:`tradeoff`."""

    metric: str
    limits: Mapping[str, int | None]
    time_limit_s: float | None
    mip_rel_gap: float


def tradeoff(missions: Sequence[MissionCandidates], options: FleetOptions) -> list[TradeoffPoint]:
    """Price of commonality: the best fleet metric for every total number of stocked part numbers.

    For ``N`` from the fewest part numbers any plan needs under the options (>= 4, one per kind) up to the
    smallest ``N`` at which the metric reaches its value without a total limit, solve with
    ``sum_p y[p] <= N`` and no stocking cost. With ``<= N`` the curve is monotone: the objective never gets
    worse as ``N`` grows (cruise_energy non-increasing, endurance_margin non-decreasing). Under
    ``options.time_limit_s`` a point whose solve stops early keeps the better of its plan and the previous
    point's (which also stocks at most ``N``), so the curve stays monotone; its ``status`` says
    ``"limit_reached"``; if the fewest-parts solve itself stops early, the curve starts at its plan's count
    (or at 4 without one), which may be above the true minimum.

    Parameters
    ----------
    missions : sequence of MissionCandidates
    options : FleetOptions
        As for :func:`optimise`; ``stocking_cost`` only enters ``objective_with_stocking``.

    Returns
    -------
    list of TradeoffPoint
        One point per ``N`` in increasing order; empty when no plan exists under the options (call
        :func:`optimise` for the explanation).
    """
    _check(missions, options)
    problem = fm.from_missions(missions, options.metric)
    limits = options.limits()
    common: _CommonSolveArgs = {"metric": options.metric, "limits": limits, "time_limit_s": options.time_limit_s,
                                "mip_rel_gap": options.mip_rel_gap}
    fewest = fm.solve(problem, goal="parts", **common)
    if fewest.status == 2:
        return []
    sense = 1.0 if options.metric == "cruise_energy" else -1.0
    free = fm.solve(problem, **common)
    if free.choice is not None:
        free_choice = fm.polish(problem, free, options.metric)
        best: float | None = _fleet_metric(missions, fm.original(problem, free_choice), options.metric)
        n_max = int(fm.used_parts(problem, free_choice).sum())
    else:  # only under a time limit: walk until every part may be stocked
        best, n_max = None, problem.n_parts
    # Without a plan from the fewest-parts solve (time limit) start at one part per kind, a lower bound.
    n_min = len(KINDS) if fewest.fun is None else int(round(fewest.fun))
    points: list[TradeoffPoint] = []
    previous: tuple[np.ndarray, float] | None = None  # best plan so far (positions, value); feasible for larger N
    for n in range(n_min, max(n_min, n_max) + 1):
        solution = fm.solve(problem, total_limit=n, **common)
        status = _status(solution)
        plan: tuple[np.ndarray, float] | None = None
        if solution.choice is not None:
            choice = fm.polish(problem, solution, options.metric)
            plan = (choice, _fleet_metric(missions, fm.original(problem, choice), options.metric))
        if previous is not None and (plan is None or sense * (plan[1] - previous[1]) > 0):
            plan = previous  # a time-limited solve did worse than a plan with fewer parts: keep that one
        if plan is None:
            points.append(TradeoffPoint(n, None, None, 0, status, None, (), {k: [] for k in KINDS},
                                        solution.seconds))
            continue
        previous = plan
        choice, value = plan
        used = fm.used_parts(problem, choice)
        points.append(TradeoffPoint(
            part_numbers=n, objective=value, objective_with_stocking=_with_stocking(value, int(used.sum()), options),
            parts_used=int(used.sum()), status=status, mip_gap=solution.mip_gap,
            assignments=_assignments(missions, fm.original(problem, choice), options.metric),
            stocked=_stocked(problem, used), solve_time_s=solution.seconds))
        if best is not None and sense * (value - best) <= 1e-7 * max(1.0, abs(best)):
            break
    return points
