"""Heat and cold in the screen: a batch's parts at an air temperature (docs/model-reference.md#heat, #cold).

With a mission's ``temperature_effects`` the screen solves its points on batches prepared here:

1. the pack's cell resistance scaled to the air temperature (:func:`server.physics.thermal.cell_resistance_factor`);
2. the cruise winding temperature from the current the cruise thrust needs (independent of R: the thrust fixes
   speed and torque) and the coupled copper loss (closed form, runaway flagged), and the cruise batch with the
   winding resistance at that temperature;
3. with a burst length: the full-throttle current (full pack) at the cruise winding temperature, the winding
   temperature after the burst at that current (an upper bound: the current falls as the winding heats), and the
   full-throttle batch with the resistance at the end of the burst.

A runaway candidate (no steady state) keeps a finite resistance, that at its own maximum winding temperature, so
its points solve; its winding check fails (NaN temperature). :func:`at_density` gives the propeller model of the
colder air of the cold-day check.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from server.physics import atmosphere, forward_flight, thermal
from server.physics.drive_screen import Batch, full_throttle
from server.physics.motor import resistance_at_temperature_ohm
from server.physics.propeller_segments import PropModel

from .library import MissionSpec


@dataclass(frozen=True)
class Heat:
    """Winding temperatures of a batch (batch shape): at the cruise point and after the burst [°C] (NaN:
    runaway), and the thermal runaway flag at the cruise point."""

    air_temperature_c: float
    cruise_winding_c: np.ndarray
    burst_winding_c: np.ndarray
    runaway: np.ndarray

    @property
    def peak_winding_c(self) -> np.ndarray:
        """The hotter of the two (the burst starts from the cruise temperature). [°C]"""
        peak: np.ndarray = np.fmax(self.cruise_winding_c, self.burst_winding_c)
        return np.where(self.runaway, np.nan, peak)


def cruise_current(batch: Batch, model: PropModel, thrust_n: np.ndarray,
                   flight: forward_flight.FlightState | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Motor current [A] and back-EMF [V] at the cruise thrust (the propeller fixes speed and torque; a multirotor
    flight state corrects the torque as :func:`server.physics.drive_screen.cruise_point` does)."""
    y, seg = model.speed_for_thrust(thrust_n, batch.q)
    _, cp = model.coefficients(batch.q, seg, y)
    torque = (model.kq[batch.q] * cp) * (y * y)
    if flight is not None:
        torque = forward_flight.shaft_torque_nm(torque, model.omega_rad_s(y), 0.5 * model.diameter_m[batch.q], flight)
    current: np.ndarray = batch.no_load_current_a + batch.kv_si * torque
    emf: np.ndarray = y * model.emf_per_y(batch.kv_si)
    return current, emf


def _resistance(batch: Batch, temperature_c: np.ndarray) -> np.ndarray:
    usable = np.where(np.isfinite(temperature_c), temperature_c, batch.max_winding_temperature_c)
    return resistance_at_temperature_ohm(batch.motor_resistance_ohm, usable)


def cold_pack(batch: Batch, air_temperature_c: float) -> Batch:
    """The batch with its pack resistance at the air temperature (reference 25 °C)."""
    factor = float(thermal.cell_resistance_factor(air_temperature_c))
    return replace(batch, pack_resistance_ohm=batch.pack_resistance_ohm * factor)


def at_temperature(batch: Batch, model: PropModel, mission: MissionSpec, air_temperature_c: float, *,
                   winding: bool = True) -> tuple[Batch, Batch, Heat | None]:
    """Cruise batch, full-throttle batch and winding temperatures at ``air_temperature_c``.

    The pack is always taken at the air temperature; the winding only when ``winding`` (else the resistance
    stays as stated and no :class:`Heat` is returned).
    """
    batch = cold_pack(batch, air_temperature_c)
    if not winding:
        return batch, batch, None
    n_r = float(mission.rotor_count)
    rho = model.density_kg_m3  # the mission's, or the cold day's
    current, emf = cruise_current(batch, model, mission.thrust_per_rotor_n(batch.mass_kg, rho),
                                  mission.flight_state(batch.mass_kg, model.diameter_m[batch.q], rho))
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        cruise_c, runaway = thermal.steady_winding_temperature_c(
            air_temperature_c, current, batch.motor_resistance_ohm, batch.no_load_current_a * emf,
            batch.thermal_resistance_k_per_w)
        cruise_batch = replace(batch, motor_resistance_ohm=_resistance(batch, cruise_c))
        if mission.burst_s > 0.0:
            ft = full_throttle(cruise_batch, model, n_r, batch.voc_full_v)
            emf_full = ft.omega_rad_s / batch.kv_si
            burst_c = thermal.winding_temperature_after_c(
                cruise_c, mission.burst_s, air_temperature_c, ft.motor_current_a, batch.motor_resistance_ohm,
                batch.no_load_current_a * emf_full, batch.thermal_resistance_k_per_w, batch.thermal_time_constant_s)
            full_batch = replace(batch, motor_resistance_ohm=_resistance(batch, burst_c))
        else:
            burst_c, full_batch = cruise_c, cruise_batch
    return cruise_batch, full_batch, Heat(air_temperature_c, cruise_c, burst_c, runaway)


def at_density(model: PropModel, density_kg_m3: float) -> PropModel:
    """The propeller model in air of another density (every density term of the model is ``kt``, ``kq`` and the
    density itself: the coefficient tables and their knots do not depend on it)."""
    ratio = float(density_kg_m3) / model.density_kg_m3
    return replace(model, density_kg_m3=float(density_kg_m3), kt=model.kt * ratio, kq=model.kq * ratio)


def cold_day_density_kg_m3(mission: MissionSpec) -> float:
    """Air density at the mission altitude with the cold-day air temperature (ISA pressure). [kg/m^3]"""
    assert mission.cold_day_temperature_c is not None
    offset = float(mission.cold_day_temperature_c) - mission.air_temperature_c + mission.temperature_offset_c
    return float(atmosphere.air_density_kg_m3(mission.altitude_m, offset))
