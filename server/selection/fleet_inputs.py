"""Inputs of a fleet plan: each mission's candidates and the plan's options (validated, frozen).

See :mod:`server.selection.fleet` for the metrics and the optimiser.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np

from .fleet_model import ID_FIELDS as _ID_FIELDS
from .fleet_model import KINDS

Metric = Literal["cruise_energy", "endurance_margin"]
METRICS: tuple[str, ...] = ("cruise_energy", "endurance_margin")


@dataclass(frozen=True, eq=False)  # arrays: compare by identity
class MissionCandidates:
    """One mission of the fleet and its candidates (1-D arrays of one length ``K >= 1``, in ranking order).

    Parameters
    ----------
    mission_id : Any
        The mission's id (hashable, unique within the plan).
    weight : float
        Weight of the mission in the fleet objective, > 0 (airframes x flight hours per year, or plain). [-]
    battery_id, esc_id, motor_id, propeller_id : array_like
        Part ids of each candidate (ids of different kinds are different parts even if equal).
    packs_in_parallel : array_like of int
        Packs in parallel of each candidate, >= 1.
    cruise_power_w : array_like of float
        Craft electrical power at the cruise point, finite and >= 0. [W]
    endurance_min : array_like of float
        Endurance of each candidate, finite. [min]
    min_endurance_min : float, default 0
        The mission's required endurance; margin = ``endurance_min - min_endurance_min``. [min]
    best_cruise_power_w, best_endurance_min : float, optional
        The mission's own best over its whole ranking (the candidates may be the top K by another objective);
        by default the best among the candidates. Must not be worse than any candidate. [W], [min]
    """

    mission_id: Any
    weight: float
    battery_id: np.ndarray
    esc_id: np.ndarray
    motor_id: np.ndarray
    propeller_id: np.ndarray
    packs_in_parallel: np.ndarray
    cruise_power_w: np.ndarray
    endurance_min: np.ndarray
    min_endurance_min: float = 0.0
    best_cruise_power_w: float | None = None
    best_endurance_min: float | None = None

    def __post_init__(self) -> None:
        where = f"mission {self.mission_id!r}"
        weight = float(self.weight)
        if not (math.isfinite(weight) and weight > 0):
            raise ValueError(f"weight of {where} must be a finite number > 0, got {self.weight!r}")
        object.__setattr__(self, "weight", weight)
        arrays = {name: np.asarray(getattr(self, name)) for name in
                  (*_ID_FIELDS, "packs_in_parallel", "cruise_power_w", "endurance_min")}
        for name, a in arrays.items():
            if a.ndim != 1:
                raise ValueError(f"{name} of {where} must be a 1-D array, got shape {a.shape}")
        k = arrays["battery_id"].shape[0]
        if k == 0:
            raise ValueError(f"candidates of {where}: K must be >= 1 (battery_id etc. are empty)")
        for name, a in arrays.items():
            if a.shape[0] != k:
                raise ValueError(f"{name} of {where} has {a.shape[0]} entries, battery_id has {k}")
        for name in ("cruise_power_w", "endurance_min"):
            try:
                arrays[name] = arrays[name].astype(float)
            except (TypeError, ValueError) as exc:
                raise ValueError(f"{name} of {where} must be numbers") from exc
            if not np.isfinite(arrays[name]).all():
                raise ValueError(f"{name} of {where} must be finite")
        if (arrays["cruise_power_w"] < 0).any():
            raise ValueError(f"cruise_power_w of {where} must be >= 0")
        packs = arrays["packs_in_parallel"]
        if not (np.issubdtype(packs.dtype, np.integer) or np.issubdtype(packs.dtype, np.floating)) or \
                (packs != np.round(packs)).any() or (packs < 1).any():
            raise ValueError(f"packs_in_parallel of {where} must be integers >= 1")
        arrays["packs_in_parallel"] = packs.astype(np.int64)
        for name, a in arrays.items():
            a.setflags(write=False)
            object.__setattr__(self, name, a)
        required = float(self.min_endurance_min)
        if not math.isfinite(required):
            raise ValueError(f"min_endurance_min of {where} must be finite")
        object.__setattr__(self, "min_endurance_min", required)
        for name, own, sense in (("best_cruise_power_w", arrays["cruise_power_w"].min(), 1.0),
                                 ("best_endurance_min", arrays["endurance_min"].max(), -1.0)):
            given = getattr(self, name)
            if given is None:
                continue
            given = float(given)
            if not math.isfinite(given) or sense * (given - own) > 1e-9 * max(1.0, abs(own)):
                raise ValueError(f"{name} of {where} ({given!r}) is worse than one of its candidates ({own!r})")
            object.__setattr__(self, name, given)

    def __len__(self) -> int:
        return int(self.battery_id.shape[0])

    @property
    def margin_min(self) -> np.ndarray:
        """Endurance margin of each candidate, ``endurance_min - min_endurance_min``. [min]"""
        return self.endurance_min - self.min_endurance_min

    def own_best(self, metric: str) -> float:
        """The mission's own best: lowest cruise power [W] or highest endurance margin [min]."""
        if metric == "cruise_energy":
            return float(self.cruise_power_w.min() if self.best_cruise_power_w is None else self.best_cruise_power_w)
        best = self.endurance_min.max() if self.best_endurance_min is None else self.best_endurance_min
        return float(best) - self.min_endurance_min

    @classmethod
    def from_rows(cls, mission_id: Any, weight: float, rows: Sequence[Any], min_endurance_min: float = 0.0,
                  best_cruise_power_w: float | None = None,
                  best_endurance_min: float | None = None) -> MissionCandidates:
        """From ranking rows (:class:`~server.selection.result.CandidateRow` or their ``as_dict()``), in order.

        ``cruise_power_w`` is read from ``row.cruise["electrical_power_w"]`` [W]; the other arguments are as for
        the class.
        """
        def get(row: Any, name: str) -> Any:
            return row[name] if isinstance(row, Mapping) else getattr(row, name)

        columns: dict[str, list[Any]] = {name: [get(r, name) for r in rows] for name in
                                         (*_ID_FIELDS, "packs_in_parallel", "endurance_min")}
        power = [get(r, "cruise")["electrical_power_w"] for r in rows]
        return cls(mission_id=mission_id, weight=weight, cruise_power_w=np.asarray(power, dtype=float),
                   min_endurance_min=min_endurance_min, best_cruise_power_w=best_cruise_power_w,
                   best_endurance_min=best_endurance_min, **{k: np.asarray(v) for k, v in columns.items()})


@dataclass(frozen=True)
class FleetOptions:
    """Options of a fleet plan (names as in the API contract).

    Parameters
    ----------
    metric : {"cruise_energy", "endurance_margin"}
        What to optimise (see the module docstring).
    one_battery : bool
        The whole fleet uses one battery part number.
    max_part_numbers : mapping of kind to int or None
        Maximum distinct part numbers per kind (``"batteries"``, ``"escs"``, ``"motors"``, ``"propellers"``);
        missing or ``None``: no limit.
    stocking_cost : float
        Cost per stocked part number, >= 0, in the metric's units. [W] or [min]
    time_limit_s : float, optional
        Solver time limit per MILP; a plan found but not proven optimal has status ``"limit_reached"``. [s]
    mip_rel_gap : float
        HiGHS relative MIP gap at which a solve stops (HiGHS' default is 1e-4; ours is near-exact). [-]
    """

    metric: Metric = "cruise_energy"
    one_battery: bool = False
    max_part_numbers: Mapping[str, int | None] = field(default_factory=dict)
    stocking_cost: float = 0.0
    time_limit_s: float | None = None
    mip_rel_gap: float = 1e-7

    def __post_init__(self) -> None:
        if self.metric not in METRICS:
            raise ValueError(f"metric must be one of {METRICS}, got {self.metric!r}")
        cost = float(self.stocking_cost)
        if not (math.isfinite(cost) and cost >= 0):
            raise ValueError(f"stocking_cost must be a finite number >= 0, got {self.stocking_cost!r}")
        object.__setattr__(self, "stocking_cost", cost)
        limits: dict[str, int | None] = dict.fromkeys(KINDS)
        for kind, limit in dict(self.max_part_numbers or {}).items():
            if kind not in KINDS:
                raise ValueError(f"max_part_numbers: unknown kind {kind!r}; choose from {KINDS}")
            if limit is not None:
                if isinstance(limit, bool) or int(limit) != limit or limit < 0:
                    raise ValueError(f"max_part_numbers.{kind} must be an integer >= 0 or null, got {limit!r}")
                limit = int(limit)
            limits[kind] = limit
        object.__setattr__(self, "max_part_numbers", limits)
        object.__setattr__(self, "one_battery", bool(self.one_battery))
        if self.time_limit_s is not None and not float(self.time_limit_s) > 0:
            raise ValueError(f"time_limit_s must be > 0, got {self.time_limit_s!r}")
        if not 0 <= float(self.mip_rel_gap) < 1:
            raise ValueError(f"mip_rel_gap must be in [0, 1), got {self.mip_rel_gap!r}")

    def limits(self) -> dict[str, int | None]:
        """Effective per-kind limits (``one_battery`` caps batteries at 1)."""
        limits = dict(self.max_part_numbers)
        if self.one_battery:
            limits["batteries"] = 1 if limits["batteries"] is None else min(1, limits["batteries"])
        return limits
