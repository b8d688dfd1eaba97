"""Full result rows for a few candidates: re-evaluated with the screening code, plus every loss term."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import fields

import numpy as np

from server.physics import esc as esc_model
from server.physics.battery import nominal_voltage_per_cell_v
from server.physics.propeller_segments import PropModel

from .constraints import screen
from .enumerate import batch_for
from .library import MissionSpec, PartsLibrary
from .profile import summary as profile_summary
from .result import CandidateRow, CandidateSet


def _f(a: np.ndarray, i: int) -> float:
    return float(a[i])


def _temperature(a: np.ndarray, i: int) -> float | None:
    """A winding temperature, None for runaway (NaN)."""
    value = float(a[i])
    return value if math.isfinite(value) else None


def build_rows(library: PartsLibrary, mission: MissionSpec, model: PropModel, cs: CandidateSet,
               stop_reasons: Sequence[str] | None = None, refined: np.ndarray | None = None,
               screening_endurance: np.ndarray | None = None) -> list[CandidateRow]:
    """Rows for the candidates of ``cs`` in their order (rank 1 first).

    ``cs.endurance_min`` is reported as the endurance; ``stop_reasons``/``refined`` say whether it comes from
    the discharge simulation, ``screening_endurance`` keeps the screening estimate beside it.
    """
    n = len(cs)
    if n == 0:
        return []
    sc = screen(batch_for(library, mission, *cs.indices()), model, mission, all_violations=False)
    batch = sc.batch  # pack and winding resistance at temperature, when the mission asks for it
    cr, full, low = sc.cruise, sc.full, sc.low
    n_r = float(mission.rotor_count)
    with np.errstate(invalid="ignore", divide="ignore"):
        terms = esc_model.loss_terms(batch.loss_coefficients(cr.motor_current_a, cr.motor_voltage_v),
                                     cr.bus_voltage_v, cr.duty)
        shaft = cr.torque_nm * cr.omega_rad_s
        per_rotor_power = cr.bus_voltage_v * cr.bus_current_a
        losses = {  # the names of operating_point.LOSS_TERMS: the motor's and ESC conduction, then every ESC term
            "motor_copper_w": cr.motor_current_a**2 * batch.motor_resistance_ohm,
            "motor_no_load_w": batch.no_load_current_a * cr.omega_rad_s / batch.kv_si,
            "esc_conduction_w": cr.motor_current_a**2 * batch.r_on_ohm,
            **{f.name: getattr(terms, f.name) for f in fields(terms)},
        }
        pack_loss = batch.pack_resistance_ohm * sc.pack_current_a**2
        pack_limit = np.broadcast_to(batch.pack_limit_a, (n,))
    pk = library.packs
    rows = []
    heat = sc.heat
    for i in range(n):
        p, k = int(cs.pack[i]), int(cs.k[i])
        cost = float(cs.cost[i])
        cells = float(pk.cells_series[p])
        nominal = cells * float(nominal_voltage_per_cell_v(pk.full_voltage_per_cell_v[p]))
        i_full = _f(full.motor_current_a, i)
        full_row: dict[str, float | None] = {
            "thrust_to_weight": _f(sc.thrust_to_weight, i), "thrust_n": _f(low.thrust_n, i),
            "motor_current_a": i_full, "bus_current_a": n_r * i_full,
            "bus_voltage_v": _f(full.bus_voltage_v, i), "rpm": _f(full.omega_rad_s, i) * 60.0 / (2.0 * math.pi),
        }
        if heat is not None:
            full_row["winding_temperature_c"] = _temperature(heat.burst_winding_c, i)
        rows.append(CandidateRow(
            rank=i + 1,
            battery_id=pk.ids[p].item(), esc_id=library.escs.ids[cs.esc[i]].item(),
            motor_id=library.motors.ids[cs.motor[i]].item(), propeller_id=library.propellers.ids[cs.prop[i]].item(),
            packs_in_parallel=k, all_up_mass_g=1000.0 * _f(sc.mass_kg, i),
            cruise={
                "duty": _f(cr.duty, i), "rpm": _f(cr.omega_rad_s, i) * 60.0 / (2.0 * math.pi),
                "electrical_power_w": _f(sc.electrical_power_w, i),
                "specific_thrust_g_per_w": _f(sc.specific_thrust_g_per_w, i),
                "bus_current_a": _f(sc.pack_current_a, i), "bus_voltage_v": _f(cr.bus_voltage_v, i),
                "drive_efficiency": _f(shaft, i) / _f(per_rotor_power, i),
                "thrust_n": _f(cr.thrust_n, i), "motor_current_a": _f(cr.motor_current_a, i),
                "shaft_power_w": _f(shaft, i), "state_of_charge": float(mission.cruise_state_of_charge),
                "losses": {name: _f(value, i) for name, value in losses.items()} | {
                    "pack_w": _f(pack_loss, i)},
            } | ({} if heat is None else {"winding_temperature_c": _temperature(heat.cruise_winding_c, i)}),
            full_throttle=full_row,
            endurance_min=float(cs.endurance_min[i]),
            endurance_stop_reason=stop_reasons[i] if stop_reasons is not None else "estimate",
            endurance_refined=bool(refined[i]) if refined is not None else False,
            screening_endurance_min=float(screening_endurance[i]) if screening_endurance is not None else float(
                sc.endurance_min[i]),
            cost=None if math.isnan(cost) else cost,
            margins={
                "motor_current_ratio": i_full / float(library.motors.max_current_a[cs.motor[i]]),
                "esc_rating_ratio": float(library.escs.continuous_current_a[cs.esc[i]]) / i_full,
                "pack_current_ratio": n_r * i_full / float(pack_limit[i]),
            },
            pack_voltage_nominal_v=nominal, cells_series=int(cells),
            profile=profile_summary(mission, sc.profile, i) if sc.profile is not None else None,
        ))
    return rows
