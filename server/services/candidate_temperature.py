"""Heat and cold for one candidate on the reference solvers (compare, shortlists): the same model as the ranking's
screen (:mod:`server.selection.temperature`, docs/model-reference.md#heat and #cold), solved with
:mod:`server.physics.drive` instead of the screening kernels."""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Any

import numpy as np

from server.physics import drive, thermal
from server.physics.battery import PackParams
from server.physics.forward_flight import FlightState
from server.physics.motor import MotorParams, resistance_at_temperature_ohm
from server.selection.library import MissionSpec
from server.selection.temperature import cold_day_density_kg_m3

G0 = 9.80665


def _f(value: Any) -> float | None:
    number = float(np.ravel(value)[0])
    return number if math.isfinite(number) else None


def _hot(motor: MotorParams, temperature_c: float | None, limit_c: float) -> MotorParams:
    usable = limit_c if temperature_c is None else temperature_c
    return replace(motor, resistance_ohm=resistance_at_temperature_ohm(motor.resistance_ohm, usable))


def cold_pack(pack: PackParams, air_temperature_c: float) -> PackParams:
    """The pack with its cell resistance at the air temperature (reference 25 °C)."""
    return replace(pack, cell_resistance_ohm=pack.cell_resistance_ohm * thermal.cell_resistance_factor(
        air_temperature_c))


def at_temperature(kwargs: dict[str, Any], pack: PackParams, spec: MissionSpec, thermal_values: tuple[float, ...],
                   thrust_n: float, air_temperature_c: float, soc: float, *, winding: bool = True,
                   flight: FlightState | None = None) -> tuple[MotorParams, MotorParams, PackParams,
                                                               dict[str, Any] | None]:
    """Cruise motor, full-throttle motor, pack and the winding temperatures at ``air_temperature_c``.

    ``kwargs`` are the solver arguments without the pack (motor, ESC, propeller, rotors, density, airspeed);
    ``thermal_values`` the motor's R_th [K/W], tau [s] and maximum [°C]; ``flight`` the multirotor flight state
    of the cruise point (its torque correction sets the cruise current).
    """
    pack = cold_pack(pack, air_temperature_c)
    motor: MotorParams = kwargs["motor"]
    if not winding:
        return motor, motor, pack, None
    r_th, tau, limit = thermal_values

    def solver(m: MotorParams, state_of_charge: float) -> dict[str, Any]:
        return {**kwargs, "motor": m, "open_circuit_voltage_v": float(pack.open_circuit_voltage_v(state_of_charge)),
                "pack_resistance_ohm": float(pack.resistance_ohm)}

    point = drive.for_thrust(thrust_n, **solver(motor, soc), flight=flight)  # its current does not depend on R
    with np.errstate(invalid="ignore", divide="ignore"):
        cruise_c, runaway = thermal.steady_winding_temperature_c(
            air_temperature_c, point.motor_current_a, motor.resistance_ohm, point.motor_no_load_loss_w, r_th)
    cruise_t = None if bool(np.ravel(runaway)[0]) else _f(cruise_c)
    cruise_motor = _hot(motor, cruise_t, limit)
    burst_t = cruise_t
    full_motor = cruise_motor
    if spec.burst_s > 0 and cruise_t is not None:
        peak = drive.full_throttle(**solver(cruise_motor, 1.0))
        burst_t = _f(thermal.winding_temperature_after_c(
            cruise_t, spec.burst_s, air_temperature_c, peak.motor_current_a, motor.resistance_ohm,
            peak.motor_no_load_loss_w, r_th, tau))
        full_motor = _hot(motor, burst_t, limit)
    heat = {"air_temperature_c": air_temperature_c, "cruise_winding_c": cruise_t, "burst_winding_c": burst_t,
            "burst_s": spec.burst_s, "runaway": cruise_t is None, "max_winding_temperature_c": limit,
            "thermal_resistance_k_per_w": r_th, "thermal_time_constant_s": tau}
    return cruise_motor, full_motor, pack, heat


def cold_day(kwargs: dict[str, Any], pack: PackParams, spec: MissionSpec, thermal_values: tuple[float, ...],
             mass_kg: float, diameter_m: float) -> dict[str, Any]:
    """The cold-day re-check: thrust-to-weight at SOC 1 − usable, whether the bus holds at full throttle, and the
    screening endurance (usable capacity ÷ cruise pack current) at the mission's cold-day air temperature (a
    multirotor in forward flight meets the drag of the denser air)."""
    assert spec.cold_day_temperature_c is not None
    air_c = float(spec.cold_day_temperature_c)
    rho = cold_day_density_kg_m3(spec)
    cold_kwargs = {**kwargs, "density_kg_m3": rho}
    thrust_n = float(np.ravel(spec.thrust_per_rotor_n(mass_kg, rho))[0])
    flight = spec.flight_state(mass_kg, diameter_m, rho)
    cruise_motor, full_motor, cold, _ = at_temperature(cold_kwargs, pack, spec, thermal_values, thrust_n, air_c,
                                                       spec.cruise_state_of_charge, winding=spec.temperature_effects,
                                                       flight=flight)

    def args(m: MotorParams, soc: float) -> dict[str, Any]:
        return {**cold_kwargs, "motor": m, "open_circuit_voltage_v": float(cold.open_circuit_voltage_v(soc)),
                "pack_resistance_ohm": float(cold.resistance_ohm)}

    cruise = drive.for_thrust(thrust_n, **args(cruise_motor, spec.cruise_state_of_charge), flight=flight)
    low_soc = 1.0 - spec.usable_fraction
    low = drive.full_throttle(**args(full_motor, low_soc))
    peak = drive.full_throttle(**args(full_motor, 1.0))
    tw = _f(low.thrust_n * spec.rotor_count / (mass_kg * G0))
    holds = bool(np.ravel(low.bus_voltage_v >= 0.5 * cold.open_circuit_voltage_v(low_soc))[0]
                 and np.ravel(peak.bus_voltage_v >= 0.5 * cold.open_circuit_voltage_v(1.0))[0])
    current = _f(cruise.pack_current_a)
    endurance = None if not current else spec.usable_fraction * float(cold.capacity_ah) * 60.0 / current
    return {"air_temperature_c": air_c, "thrust_to_weight": tw, "bus_holds": holds, "endurance_min": endurance,
            "cell_resistance_factor": float(thermal.cell_resistance_factor(air_c))}
