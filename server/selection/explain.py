"""Why this verdict: every rejection reason checked for one power system, with the numbers the ranking used.

:func:`explain` evaluates one candidate (pack × k in parallel × ESC × motor × propeller) for a mission with the
ranking engine's own code: the part-level reasons through :class:`.enumerate.PartVerdicts` (what enumeration
prunes), the operating-point reasons through :func:`.constraints.screen` on a batch of one (what screening
rejects), and, for a candidate that passes screening, the refinement's discharge simulation (what the top rows
go through). One :class:`Verdict` per reason of :data:`.constraints.REASONS`, in that order; ``first_failed`` is
the reason the ranking counts the candidate under.

Endurance: a candidate whose screening estimate is short fails there (the ranking's count); one that passes is
flown through the discharge simulation, as if it were a top row, and fails when that falls short. (A candidate
that passes screening but never reached the top N is counted feasible by a ranking without being refined.)
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from server.physics.thermal import cell_resistance_factor

from .constraints import REASON_TEXT, REASONS, Check, Screen, screen
from .enumerate import PartVerdicts, batch_for, cost_of
from .flight_report import flight_report, hover_of, hover_state
from .library import MissionSpec, PartsLibrary
from .refine import refine
from .result import CandidateRow, CandidateSet
from .rows import build_rows


@dataclass(frozen=True)
class Verdict:
    """One reason for one candidate: passed (None: not evaluated, the data it needs are missing)."""

    reason: str
    passed: bool | None
    value: float | None = None
    limit: float | list[float] | None = None
    unit: str = ""
    margin: float | None = None
    text: str = ""
    detail: str = ""

    def as_dict(self) -> dict[str, Any]:
        return {"reason": self.reason, "passed": self.passed, "value": self.value, "limit": self.limit,
                "unit": self.unit, "margin": self.margin, "text": self.text, "detail": self.detail}


@dataclass(frozen=True)
class Explanation:
    """Every verdict of one candidate, the first failed reason, and its numbers when they can be computed."""

    feasible: bool
    first_failed: str | None
    checks: list[Verdict]
    row: CandidateRow | None = None
    notes: list[str] = field(default_factory=list)
    flight: dict[str, Any] | None = None
    """Multirotor flight-state numbers (:func:`.flight_report.flight_report`); None for a plain hover or cruise."""


def _num(value: Any) -> float | None:
    number = float(np.ravel(np.asarray(value, dtype=np.float64))[0])
    return number if math.isfinite(number) else None


def _from_check(check: Check, detail: str = "") -> Verdict:
    limit: float | list[float] | None
    if isinstance(check.limit, tuple):
        limit = [float(v) for v in check.limit]
    else:
        limit = _num(check.limit)
    return Verdict(check.reason, bool(np.ravel(check.passed)[0]), _num(check.value), limit, check.unit,
                   _num(check.margin), REASON_TEXT[check.reason], detail)


FLIES = {"hover": "hovers", "cruise": "cruises", "forward_flight": "flies forward as a multirotor"}


def _temperature_detail(reason: str, sc: Screen, mission: MissionSpec) -> str:
    """The heat and cold checks' numbers in words (docs/model-reference.md#heat, #cold)."""
    heat, cold = sc.heat, sc.cold_day
    if reason == "winding_over_temperature" and heat is not None:
        cruise, burst = _num(heat.cruise_winding_c), _num(heat.burst_winding_c)
        if cruise is None:
            return (f"thermal runaway at the cruise point in {heat.air_temperature_c:.1f} °C air: the copper loss "
                    "rises faster with temperature than the air carries it away")
        text = f"{cruise:.1f} °C at the cruise point in {heat.air_temperature_c:.1f} °C air"
        if mission.burst_s > 0 and burst is not None:
            text += f", {burst:.1f} °C after the {mission.burst_s:g} s full-throttle burst"
        return text
    if reason in ("cold_day_thrust_short", "cold_day_endurance_short") and cold is not None:
        factor = float(cell_resistance_factor(cold.air_temperature_c))
        text = f"at {cold.air_temperature_c:g} °C: cell resistance × {factor:.2f} of its 25 °C value"
        if reason == "cold_day_thrust_short" and not bool(np.ravel(cold.bus_holds)[0]):
            text += "; the pack voltage collapses at full throttle"
        return text
    return ""


def _part_verdicts(library: PartsLibrary, mission: MissionSpec, v: PartVerdicts, p: int, e: int, m: int,
                   q: int) -> list[Verdict]:
    packs, escs, motors, props = library.packs, library.escs, library.motors, library.propellers
    missing = [name for name, ok in (("battery pack", v.pack_ok[p]), ("ESC", v.esc_ok[e]), ("motor", v.motor_ok[m]),
                                     ("propeller", not v.prop_missing[q])) if not ok]
    cells = float(packs.cells_series[p])
    have_prop = not v.prop_missing[q]
    table = "forward (versus J)" if mission.kind == "cruise" else "static"
    out = [
        Verdict("missing_data", not missing, text=REASON_TEXT["missing_data"],
                detail=("unknown values in: " + ", ".join(missing)) if missing else ""),
        Verdict("prop_data_invalid", (not v.prop_invalid[q]) if have_prop else None,
                text=REASON_TEXT["prop_data_invalid"],
                detail=f"the {table} table beats momentum theory at a measured point, or is not usable"
                if v.prop_invalid[q] else ""),
        Verdict("prop_too_large", bool(props.diameter_in[q] <= mission.max_prop_diameter_in),
                _num(props.diameter_in[q]), _num(mission.max_prop_diameter_in), "in",
                _num(mission.max_prop_diameter_in - props.diameter_in[q]), REASON_TEXT["prop_too_large"]),
        Verdict("prop_application", bool(props.suits(mission.kind)[q]), text=REASON_TEXT["prop_application"],
                detail="" if props.suits(mission.kind)[q] else
                f"made for {props.made_for(q)}; the mission {FLIES.get(mission.kind, 'hovers')}"),
        Verdict("no_forward_table", not v.prop_no_forward[q] if have_prop else None,
                text=REASON_TEXT["no_forward_table"]),
        Verdict("esc_cell_range", bool(PartVerdicts.esc_fits(escs, np.array(e), np.array(cells))), cells,
                [float(escs.min_cells[e]), float(escs.max_cells[e])], "cells",
                _num(min(cells - escs.min_cells[e], escs.max_cells[e] - cells)), REASON_TEXT["esc_cell_range"]),
        Verdict("motor_cell_limit", bool(PartVerdicts.motor_fits(motors, np.array(m), np.array(cells))), cells,
                _num(motors.max_cells[m]), "cells", _num(motors.max_cells[m] - cells),
                REASON_TEXT["motor_cell_limit"]),
    ]
    return out


def explain(library: PartsLibrary, mission: MissionSpec, *, pack: int, packs_in_parallel: int, esc: int, motor: int,
            prop: int) -> Explanation:
    """Every rejection reason for one candidate, given by library positions (not part ids)."""
    if not 1 <= packs_in_parallel <= mission.max_packs_in_parallel:
        raise ValueError(f"packs_in_parallel must be 1..{mission.max_packs_in_parallel} for this airframe")
    model = mission.propeller_model(library.propellers)
    verdicts = PartVerdicts.of(library, mission, model)
    checks = _part_verdicts(library, mission, verdicts, pack, esc, motor, prop)
    by_reason_part = {c.reason: c for c in checks}
    evaluable = (by_reason_part["missing_data"].passed and by_reason_part["prop_data_invalid"].passed
                 and by_reason_part["no_forward_table"].passed is not False)
    index = (np.array([pack]), np.array([packs_in_parallel]), np.array([esc]), np.array([motor]), np.array([prop]))
    row: CandidateRow | None = None
    notes: list[str] = []
    flight: dict[str, Any] | None = None
    if evaluable:
        batch = batch_for(library, mission, *index)
        sc = screen(batch, model, mission, all_violations=False)
        by_reason = {c.reason: c for c in sc.checks}
        for reason in REASONS[len(checks):]:
            if reason in by_reason:
                checks.append(_from_check(by_reason[reason], _temperature_detail(reason, sc, mission)))
            else:  # a limit the mission does not set (e.g. no maximum all-up mass)
                checks.append(Verdict(reason, True, text=REASON_TEXT[reason], detail="the mission sets no limit"))
        cs = CandidateSet(index[0], index[1], index[2], index[3], index[4],
                          electrical_power_w=sc.electrical_power_w.ravel(),
                          endurance_min=sc.endurance_min.ravel(),
                          specific_thrust_g_per_w=sc.specific_thrust_g_per_w.ravel(),
                          thrust_to_weight=sc.thrust_to_weight.ravel(), mass_kg=sc.mass_kg.ravel(),
                          cost=cost_of(library, mission, *index),
                          profile_energy_wh=np.broadcast_to(sc.profile_energy_wh, sc.code.shape).ravel())
        if mission.has_flight_state:
            flight = _flight(library, mission, model, batch, sc, prop)
        screened_ok = bool(sc.code.ravel()[0] == 0)
        if screened_ok:
            minutes, reasons = refine(library, mission, model, cs)
            refined = cs.replace_endurance(minutes)
            row = build_rows(library, mission, model, refined, reasons, np.ones(1, dtype=bool),
                             cs.endurance_min)[0]
            at = next(i for i, c in enumerate(checks) if c.reason == "endurance_short")
            if not minutes[0] >= mission.min_endurance_min:
                checks[at] = Verdict("endurance_short", False, _num(minutes[0]), _num(mission.min_endurance_min),
                                     "min", _num(minutes[0] - mission.min_endurance_min),
                                     REASON_TEXT["endurance_short"],
                                     f"the discharge simulation gives {minutes[0]:.1f} min (screening estimate "
                                     f"{float(cs.endurance_min[0]):.1f} min)")
            else:
                checks[at] = Verdict("endurance_short", True, _num(minutes[0]), _num(mission.min_endurance_min),
                                     "min", _num(minutes[0] - mission.min_endurance_min),
                                     REASON_TEXT["endurance_short"], "discharge simulation")
        elif sc.cruise.reachable.ravel()[0]:
            row = build_rows(library, mission, model, cs)[0]
    else:
        checks += [Verdict(reason, None, text=REASON_TEXT[reason], detail="not evaluated: part data missing")
                   for reason in REASONS[len(checks):]]
        notes.append("Operating points need every part's data: fill in what is missing, or calibrate it from a "
                     "bench run.")
    first = next((c.reason for c in checks if c.passed is False), None)
    return Explanation(feasible=first is None, first_failed=first, checks=checks, row=row, notes=notes, flight=flight)


def _flight(library: PartsLibrary, mission: MissionSpec, model: Any, batch: Any, sc: Any, prop: int) -> dict[str, Any]:
    """The flight state of the candidate and its power against the same craft hovering (screening points)."""
    diameter = model.diameter_m[prop]
    state = mission.flight_state(batch.mass_kg, diameter)
    assert state is not None
    hovering = screen(batch, model, hover_of(mission), all_violations=False)
    return flight_report(mission, state, hover_state(mission, batch.mass_kg, diameter).ideal_power_w,
                         sc.cruise.omega_rad_s, diameter, sc.electrical_power_w, hovering.electrical_power_w)
