"""Why no fleet plan exists: the conflicting missions and the binding constraints.

Internal to :mod:`server.selection.fleet`. Without limits a plan always exists (every mission has a candidate),
so infeasibility comes from the constraint groups ``max_part_numbers.<kind>`` and ``one_battery``. A deletion
filter (drop a group or a mission whenever the rest stays infeasible; each test is a small feasibility MILP)
finds a small irreducible core: constraints, then missions, then constraints again on those missions. Per
limited kind, the fewest part numbers of that kind alone that cover every mission (a set-cover MILP) is
compared with the limit, and for one battery the mission pairs whose battery sets do not intersect are listed.
"""

from __future__ import annotations

import itertools
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy.optimize import Bounds, LinearConstraint, milp

from . import fleet_model as fm
from .fleet_model import KINDS

_NAMES = {"batteries": "battery", "escs": "ESC", "motors": "motor", "propellers": "propeller"}


@dataclass(frozen=True)
class Infeasibility:
    """Explanation of an infeasible fleet plan.

    ``binding``: the constraint groups of an irreducible core (``"one_battery"``, ``"max_part_numbers.<kind>"``);
    without any one of them the ``conflicting_missions`` can be flown together. ``minimum_needed[kind]``: the
    fewest part numbers of that kind, considered alone, that cover every mission of the plan, beside
    ``limits[kind]`` (the effective limit; ``one_battery`` makes it 1). ``battery_conflicts``: pairs of missions
    whose candidates share no battery (listed when ``one_battery`` or a battery limit of 1 binds).
    """

    message: str
    binding: tuple[str, ...]
    conflicting_missions: tuple[Any, ...]
    battery_conflicts: tuple[tuple[Any, Any], ...]
    minimum_needed: dict[str, int]
    limits: dict[str, int | None]


def _count(n: int, label: str) -> str:
    return f"{n} {label} part number{'' if n == 1 else 's'}"


def _groups(options: Any) -> list[tuple[str, str, int]]:
    groups = [(f"max_part_numbers.{kind}", kind, int(limit)) for kind, limit in options.max_part_numbers.items()
              if limit is not None]
    if options.one_battery:
        groups.append(("one_battery", "batteries", 1))  # tried last, so the user's explicit option is kept
    return groups


def _limits(groups: Sequence[tuple[str, str, int]]) -> dict[str, int | None]:
    limits: dict[str, int | None] = dict.fromkeys(KINDS)
    for _, kind, limit in groups:
        current = limits[kind]
        limits[kind] = limit if current is None else min(current, limit)
    return limits


def _feasible(missions: Sequence[Any], groups: Sequence[tuple[str, str, int]]) -> bool:
    solution = fm.solve(fm.from_missions(missions, "cruise_energy"), metric="cruise_energy", limits=_limits(groups),
                        goal="feasibility")
    return solution.status != 2


def kind_minimum(problem: fm.FleetProblem, kind: str) -> int:
    """Fewest part numbers of one kind such that every mission has a candidate using one of them.

    A set-cover MILP over that kind's parts (other kinds unconstrained); a lower bound on the count of that kind
    in any plan.
    """
    k = KINDS.index(kind)
    parts = np.flatnonzero(problem.part_kind == k)
    column = np.full(problem.n_parts, -1)
    column[parts] = np.arange(parts.size)
    cover = np.zeros((problem.n_missions, parts.size))
    cover[problem.mission_of_x, column[problem.part_of[:, k]]] = 1.0
    res = milp(np.ones(parts.size), integrality=np.ones(parts.size), bounds=Bounds(0, 1),
               constraints=LinearConstraint(cover, 1.0, np.inf))
    return int(round(res.fun))


def battery_conflicts(missions: Sequence[Any]) -> list[tuple[Any, Any]]:
    """Pairs of missions (input order) whose candidates' battery id sets do not intersect."""
    sets = [set(np.asarray(m.battery_id).tolist()) for m in missions]
    return [(missions[i].mission_id, missions[j].mission_id)
            for i, j in itertools.combinations(range(len(missions)), 2) if not sets[i] & sets[j]]


def explain(missions: Sequence[Any], options: Any, problem: fm.FleetProblem) -> Infeasibility:
    """Explain why no plan exists for ``missions`` under ``options`` (both already validated and infeasible)."""
    groups = _groups(options)
    kept = list(groups)
    for group in groups:
        trial = [g for g in kept if g != group]
        if not _feasible(missions, trial):
            kept = trial
    core = list(missions)
    for mission in missions:
        trial = [m for m in core if m is not mission]
        if trial and not _feasible(trial, kept):
            core = trial
    for group in list(kept):
        trial = [g for g in kept if g != group]
        if not _feasible(core, trial):
            kept = trial

    limits = options.limits()
    minimum = {kind: kind_minimum(problem, kind) for kind in KINDS if limits[kind] is not None}
    binding = tuple(name for name, _, _ in kept)
    battery_binds = any(kind == "batteries" and limit <= 1 for _, kind, limit in kept)
    pairs = battery_conflicts(missions) if battery_binds else []
    names = ", ".join(repr(m.mission_id) for m in core)

    sentences = []
    for name, kind, limit in kept:
        if name == "one_battery":
            if minimum["batteries"] <= 1:
                sentences.append("one_battery (enough on its own: one battery type appears in every mission's "
                                 "candidates)")
            elif pairs:
                listed = "; ".join(f"{a!r} and {b!r}" for a, b in pairs[:10])
                more = f" (and {len(pairs) - 10} more pairs)" if len(pairs) > 10 else ""
                sentences.append(f"one battery type for the whole fleet is impossible: these missions' candidates "
                                 f"share no battery: {listed}{more}")
            else:
                sentences.append("one battery type for the whole fleet is impossible: no battery appears in every "
                                 "mission's candidates, although every two missions share one")
            continue
        label = _NAMES[kind]
        need = minimum[kind]
        if need > limit:
            sentences.append(f"{name} = {limit}, but the missions need at least {_count(need, label)}")
        else:
            sentences.append(f"{name} = {limit} (enough on its own: every mission can be flown with "
                             f"{_count(need, label)})")
    joint = len(kept) > 1 and all(minimum[kind] <= limit for _, kind, limit in kept)
    message = "No fleet plan meets the options: " + "; ".join(sentences) + "."
    if joint:
        message += " Together these constraints leave no candidate set that flies every mission."
    under = " and ".join(binding)
    if len(core) == 1:
        message += f" Conflicting mission: {names} cannot be flown at all under {under}."
    else:
        what = "constraints" if len(binding) > 1 else "the constraint"
        message += (f" Conflicting missions: {names}: no plan flies them all under {under}; dropping any one of "
                    f"these missions, or {what}, makes a plan possible.")
    return Infeasibility(message=message, binding=binding, conflicting_missions=tuple(m.mission_id for m in core),
                         battery_conflicts=tuple(pairs), minimum_needed=minimum, limits=limits)
