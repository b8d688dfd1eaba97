"""Refinement: the constant-thrust discharge simulation of the best few candidates.

Screening estimates endurance as usable capacity over the pack current at the cruise state of charge. The
best candidates are then flown through a discharge from a full pack, the operating point re-solved as the
pack sags, until usable capacity, the under-load cut-off per cell or duty > 1.

Two paths give the same flight (``tests/selection/test_fast_paths.py`` holds them to 1e-9 relative):

- ``"fast"`` (default): every SOC node of every candidate is solved at once with the screening physics
  (:func:`server.physics.drive_screen.cruise_point`: the speed for the thrust on the propeller segment, then the
  sagged bus by Newton, with every partial-throttle ESC loss and the full-throttle band), and the node values go
  through the physics engine's own march (:func:`server.physics.fast.march_constant_thrust`, the integrator of
  :func:`server.physics.endurance.constant_thrust`: same SOC nodes, trapezoid rule, event location),
- ``"reference"``: :func:`server.physics.endurance.constant_thrust` itself (bracketed root finding per node).
"""

from __future__ import annotations

from dataclasses import fields, replace

import numpy as np

from server.physics import endurance, fast, thermal
from server.physics._types import as_float_array
from server.physics.battery import PackParams, open_circuit_voltage_per_cell_v
from server.physics.drive_screen import Batch, cruise_point
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller_segments import PropModel

from . import temperature
from .enumerate import batch_for
from .library import MissionSpec, PartsLibrary
from .result import CandidateSet

STOP_REASONS = {int(r): r.name.lower() for r in endurance.StopReason}


def _pack(library: PartsLibrary, mission: MissionSpec, cs: CandidateSet) -> PackParams:
    pk = library.packs
    k = cs.k.astype(np.float64)
    cell_resistance = pk.cell_resistance_ohm[cs.pack]
    if mission.temperature_effects:  # the pack at the air temperature (docs/model-reference.md#cold)
        cell_resistance = cell_resistance * thermal.cell_resistance_factor(mission.air_temperature_c)
    return PackParams(cells_series=pk.cells_series[cs.pack], capacity_ah=pk.capacity_ah[cs.pack] * k,
                      cell_resistance_ohm=cell_resistance,
                      cells_parallel=pk.cells_parallel[cs.pack] * k,
                      full_voltage_per_cell_v=pk.full_voltage_per_cell_v[cs.pack],
                      usable_fraction=as_float_array(mission.usable_fraction),
                      cutoff_voltage_per_cell_v=as_float_array(mission.cutoff_v_per_cell))


def refine(library: PartsLibrary, mission: MissionSpec, model: PropModel, cs: CandidateSet,
           method: str = "fast", soc_step: float = endurance.DEFAULT_SOC_STEP) -> tuple[np.ndarray, list[str]]:
    """Endurance [min] and stop reason of each candidate of ``cs`` by the constant-thrust discharge
    (``soc_step``: the march's step, fast path only; the ranking keeps the reference step)."""
    if len(cs) == 0:
        return np.empty(0), []
    if method == "fast":
        time_s, reason = _fast(library, mission, model, cs, soc_step)
    elif method == "reference":
        time_s, reason = _reference(library, mission, model, cs)
    else:
        raise ValueError(f"unknown refinement method {method!r}")
    minutes = np.asarray(time_s, dtype=np.float64) / 60.0
    return minutes, [STOP_REASONS.get(int(r), "unknown") for r in np.asarray(reason)]


def _cruise_batch(library: PartsLibrary, mission: MissionSpec, model: PropModel, cs: CandidateSet) -> Batch:
    """The candidates' batch with the winding (and pack) resistance of the cruise point at temperature, when the
    mission asks for temperature effects (the cruise current, so its winding temperature, does not change with the
    state of charge)."""
    flat = batch_for(library, mission, *cs.indices())
    if mission.temperature_effects:
        flat = temperature.at_temperature(flat, model, mission, mission.air_temperature_c)[0]
    return flat


def _fast(library: PartsLibrary, mission: MissionSpec, model: PropModel, cs: CandidateSet,
          soc_step: float = endurance.DEFAULT_SOC_STEP) -> tuple[np.ndarray, np.ndarray]:
    """Every node of every candidate in one screening call, then the physics engine's march."""
    pack = _pack(library, mission, cs)
    n = len(cs)
    nodes = fast.constant_thrust_nodes(1.0, pack, (n,), soc_step)
    full_v = library.packs.full_voltage_per_cell_v[cs.pack]
    voc = pack.cells_series[:, np.newaxis] * open_circuit_voltage_per_cell_v(nodes, full_v[:, np.newaxis])
    flat = _cruise_batch(library, mission, model, cs)
    batch = replace(flat, **{f.name: np.asarray(getattr(flat, f.name))[:, np.newaxis] for f in fields(flat)})
    batch = replace(batch, voc_cruise_v=voc)
    cruise = cruise_point(batch, model, float(mission.rotor_count), mission.thrust_per_rotor_n(batch.mass_kg),
                          mission.flight_state(batch.mass_kg, model.diameter_m[batch.q]))
    shape = voc.shape
    pack_current = np.broadcast_to(float(mission.rotor_count) * cruise.bus_current_a, shape)
    result = fast.march_constant_thrust(
        nodes, pack_current, np.broadcast_to(cruise.bus_voltage_v, shape), np.broadcast_to(cruise.duty, shape),
        np.broadcast_to(cruise.reachable, shape), ~np.isfinite(voc), pack=pack, soc_step=soc_step)
    return result.time_s, result.stop_reason


def _reference(library: PartsLibrary, mission: MissionSpec, model: PropModel,
               cs: CandidateSet) -> tuple[np.ndarray, np.ndarray]:
    """:func:`server.physics.endurance.constant_thrust` (root finding at every node)."""
    mo = library.motors
    pack = _pack(library, mission, cs)
    resistance = np.broadcast_to(_cruise_batch(library, mission, model, cs).motor_resistance_ohm, (len(cs),))
    motor = MotorParams(mo.kv_rpm_per_v[cs.motor], resistance, mo.no_load_current_a[cs.motor],
                        inductance_h=mo.inductance_h[cs.motor], max_current_a=mo.max_current_a[cs.motor])
    esc: EscParams = library.escs.params(cs.esc)
    thrust = mission.thrust_per_rotor_n(cs.mass_kg)
    result = endurance.constant_thrust(thrust, pack=pack, motor=motor, esc=esc, propeller=model.table.take(cs.prop),
                                       rotor_count=float(mission.rotor_count), density_kg_m3=mission.density_kg_m3,
                                       airspeed_m_s=mission.airspeed_m_s, initial_state_of_charge=1.0,
                                       flight=mission.flight_state(cs.mass_kg, model.diameter_m[cs.prop]))
    return result.time_s, result.stop_reason
