"""Refinement: the discharge simulation of :func:`server.physics.endurance.constant_thrust` for a few candidates.

Screening estimates endurance as usable capacity over the pack current at the cruise state of charge. The
best candidates are then flown through the physics engine's constant-thrust discharge (operating point
re-solved as the pack sags, from a full pack, until usable capacity, the under-load cut-off per cell or
duty > 1), in one vectorised call.
"""

from __future__ import annotations

import numpy as np

from server.physics import endurance
from server.physics._types import STANDARD_GRAVITY_M_S2
from server.physics.battery import PackParams
from server.physics.esc import EscParams
from server.physics.motor import MotorParams

from .library import MissionSpec, PartsLibrary
from .propmodel import PropModel
from .result import CandidateSet

STOP_REASONS = {int(r): r.name.lower() for r in endurance.StopReason}


def refine(library: PartsLibrary, mission: MissionSpec, model: PropModel,
           cs: CandidateSet) -> tuple[np.ndarray, list[str]]:
    """Endurance [min] and stop reason of each candidate of ``cs`` by the constant-thrust discharge."""
    if len(cs) == 0:
        return np.empty(0), []
    pk, es, mo = library.packs, library.escs, library.motors
    k = cs.k.astype(np.float64)
    pack = PackParams(cells_series=pk.cells_series[cs.pack], capacity_ah=pk.capacity_ah[cs.pack] * k,
                      cell_resistance_ohm=pk.cell_resistance_ohm[cs.pack],
                      cells_parallel=pk.cells_parallel[cs.pack] * k,
                      full_voltage_per_cell_v=pk.full_voltage_per_cell_v[cs.pack],
                      usable_fraction=mission.usable_fraction, cutoff_voltage_per_cell_v=mission.cutoff_v_per_cell)
    motor = MotorParams(mo.kv_rpm_per_v[cs.motor], mo.resistance_ohm[cs.motor], mo.no_load_current_a[cs.motor],
                        inductance_h=mo.inductance_h[cs.motor], max_current_a=mo.max_current_a[cs.motor])
    esc: EscParams = es.params(cs.esc)
    thrust = cs.mass_kg * (STANDARD_GRAVITY_M_S2 * mission.thrust_per_weight / float(mission.rotor_count))
    result = endurance.constant_thrust(thrust, pack=pack, motor=motor, esc=esc, propeller=model.table.take(cs.prop),
                                       rotor_count=float(mission.rotor_count), density_kg_m3=mission.density_kg_m3,
                                       airspeed_m_s=mission.airspeed_m_s, initial_state_of_charge=1.0)
    minutes = np.asarray(result.time_s, dtype=np.float64) / 60.0
    return minutes, [STOP_REASONS.get(int(r), "unknown") for r in np.asarray(result.stop_reason)]
