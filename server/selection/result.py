"""Result types of a ranking: compact candidate sets while screening, full rows and the outcome at the end."""

from __future__ import annotations

from dataclasses import asdict, dataclass, field, fields
from typing import Any, Literal, get_args

import numpy as np

from server.physics import ENGINE_VERSION

Objective = Literal["cruise_power", "endurance", "specific_thrust", "mass", "cost", "profile_energy"]
OBJECTIVES: tuple[str, ...] = get_args(Objective)
"""The objectives a ranking may optimise (lowest cruise power, longest endurance, best g/W, lowest mass, cost,
least energy over the mission's flight profile)."""

# Metric of each objective and its sense (+1: lower is better, -1: higher is better), in tie-break order.
_METRIC_ORDER: tuple[tuple[str, str, float], ...] = (
    ("cruise_power", "electrical_power_w", 1.0),
    ("endurance", "endurance_min", -1.0),
    ("specific_thrust", "specific_thrust_g_per_w", -1.0),
    ("thrust_to_weight", "thrust_to_weight", -1.0),
    ("mass", "mass_kg", 1.0),
    ("cost", "cost", 1.0),
    ("profile_energy", "profile_energy_wh", 1.0),
)


@dataclass(frozen=True)
class CandidateSet:
    """Global part indices and screening metrics of some candidates (1-D arrays of one length)."""

    pack: np.ndarray
    k: np.ndarray
    esc: np.ndarray
    motor: np.ndarray
    prop: np.ndarray
    electrical_power_w: np.ndarray
    endurance_min: np.ndarray
    specific_thrust_g_per_w: np.ndarray
    thrust_to_weight: np.ndarray
    mass_kg: np.ndarray
    cost: np.ndarray
    profile_energy_wh: np.ndarray = None  # type: ignore[assignment]  # set to NaN in __post_init__
    """Energy over the mission's flight profile, reserve excluded (NaN: the mission has no profile). [Wh]"""

    def __post_init__(self) -> None:
        if self.profile_energy_wh is None:
            object.__setattr__(self, "profile_energy_wh", np.full(self.pack.shape[0], np.nan))

    def __len__(self) -> int:
        return int(self.pack.shape[0])

    @classmethod
    def empty(cls) -> CandidateSet:
        ints = [np.empty(0, dtype=np.intp) for _ in range(5)]
        return cls(*ints, *(np.empty(0) for _ in range(7)))

    @classmethod
    def concat(cls, *sets: CandidateSet) -> CandidateSet:
        return cls(**{f.name: np.concatenate([getattr(s, f.name) for s in sets]) for f in fields(cls)})

    def take(self, index: np.ndarray) -> CandidateSet:
        return CandidateSet(**{f.name: getattr(self, f.name)[index] for f in fields(self)})

    def replace_endurance(self, endurance_min: np.ndarray) -> CandidateSet:
        values = {f.name: getattr(self, f.name) for f in fields(self)}
        values["endurance_min"] = endurance_min
        return CandidateSet(**values)

    def indices(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        return self.pack, self.k, self.esc, self.motor, self.prop


def primary_key(cs: CandidateSet, objective: str) -> np.ndarray:
    """The objective as a key where lower is better (NaN, e.g. an unknown cost, becomes +inf)."""
    for name, metric, sense in _METRIC_ORDER:
        if name == objective:
            key = sense * getattr(cs, metric)
            return np.where(np.isnan(key), np.inf, key)
    raise ValueError(f"unknown objective {objective!r}; choose one of {OBJECTIVES}")


def ranking_order(cs: CandidateSet, objective: str, id_ranks: tuple[np.ndarray, ...]) -> np.ndarray:
    """Order of ``cs`` by the objective, then the other metrics, then parts (fewer assumed parameters first, then
    id; ``id_ranks``) — a total, deterministic order.

    ``id_ranks`` holds, per part kind (pack, ESC, motor, propeller), each part's tie-break position.
    """
    keys = [primary_key(cs, objective)]
    keys += [primary_key(cs, name) for name, _, _ in _METRIC_ORDER if name != objective]
    pack_rank, esc_rank, motor_rank, prop_rank = id_ranks
    keys += [pack_rank[cs.pack], cs.k, esc_rank[cs.esc], motor_rank[cs.motor], prop_rank[cs.prop]]
    return np.lexsort(keys[::-1])


@dataclass(frozen=True)
class CandidateRow:
    """One ranked power system; powers and currents are for the whole craft unless named per rotor."""

    rank: int
    battery_id: Any
    esc_id: Any
    motor_id: Any
    propeller_id: Any
    packs_in_parallel: int
    all_up_mass_g: float
    cruise: dict[str, Any]
    full_throttle: dict[str, float | None]
    endurance_min: float
    endurance_stop_reason: str
    endurance_refined: bool
    screening_endurance_min: float
    cost: float | None
    margins: dict[str, float]
    pack_voltage_nominal_v: float
    cells_series: int
    profile: dict[str, Any] | None = None
    """The flight profile flown (per-segment energy, state of charge at each boundary, completion), when the
    mission has one (:func:`server.selection.profile.summary`)."""

    def as_dict(self) -> dict[str, Any]:
        return asdict(self)


@dataclass(frozen=True)
class RankingOutcome:
    """Everything one ranking run produced.

    ``rejected`` holds every reason of :data:`server.selection.constraints.REASONS` (zeros included), so that
    ``feasible + sum(rejected.values()) == combinations``; ``violations`` counts, per evaluated reason, every
    candidate that violates it (a candidate may appear under several).
    """

    objective: str
    combinations: int
    evaluated: int
    feasible: int
    rejected: dict[str, int]
    violations: dict[str, int]
    top: list[CandidateRow]
    pareto: list[CandidateRow]
    timings: dict[str, float]
    engine_version: str = ENGINE_VERSION
    cancelled: bool = False
    notes: list[str] = field(default_factory=list)
    rejected_examples: dict[str, list[dict[str, Any]]] = field(default_factory=dict)
    """Per reason, up to a few rejected combinations (part ids), the first in part-id order."""

    def as_dict(self) -> dict[str, Any]:
        out = asdict(self)
        out["top"] = [r.as_dict() for r in self.top]
        out["pareto"] = [r.as_dict() for r in self.pareto]
        return out
