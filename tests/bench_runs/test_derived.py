"""Per-sample derived quantities (definitions of docs/model-reference.md#air and #propeller)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from server.bench_runs.derived import derive_samples, run_air_density_kg_m3


def test_density_from_altitude_temperature_or_pressure() -> None:
    # ISA sea level 1.225 kg/m^3; 1000 m ISA 1.111659 (ATM-2, fluids 1.3.1)
    assert run_air_density_kg_m3() == pytest.approx(1.225, rel=1e-5)
    assert run_air_density_kg_m3(altitude_m=1000.0) == pytest.approx(1.111659, rel=1e-5)
    # ATM-9: pressure altitude 1000 m, OAT 30 °C -> 1.032822
    assert run_air_density_kg_m3(altitude_m=1000.0, air_temperature_c=30.0) == pytest.approx(1.032822, rel=1e-5)
    # a measured pressure wins over the altitude: rho = p / (R T)
    rho = run_air_density_kg_m3(altitude_m=1000.0, pressure_pa=95_000.0, air_temperature_c=20.0)
    assert rho == pytest.approx(95_000.0 / (287.0531 * 293.15), rel=1e-5)


def test_coefficients_powers_and_efficiencies() -> None:
    # PROP-1 (UIUC sf_10x7 at 5015 rpm, Brandt & Selig 2011): CT 0.1564, CP 0.0763, D 0.254 m
    rho, d, rpm = 1.225, 0.254, np.array([5015.0, 0.0])
    n = rpm / 60
    thrust = 0.1564 * rho * n**2 * d**4
    torque = 0.0763 * rho * n**2 * d**5 / (2 * math.pi)
    out = derive_samples(bus_voltage_v=[11.0, 11.0], bus_current_a=[7.0, 0.1], rpm=rpm, thrust_n=thrust,
                         diameter_m=d, density_kg_m3=rho, torque_nm=torque)
    assert out.thrust_coefficient[0] == pytest.approx(0.1564, rel=1e-12)
    assert out.power_coefficient[0] == pytest.approx(0.0763, rel=1e-12)
    assert out.shaft_power_w[0] == pytest.approx(57.702, rel=1e-4)  # PROP-1: P = 57.702 W
    assert out.electrical_power_w[0] == pytest.approx(77.0)
    assert out.drive_efficiency[0] == pytest.approx(57.702 / 77.0, rel=1e-4)
    assert out.specific_thrust_g_per_w[0] == pytest.approx(1000 * 5.5712 / 9.80665 / 77.0, rel=1e-4)
    assert np.isnan(out.thrust_coefficient[1]) and np.isnan(out.power_coefficient[1])


def test_without_torque_the_torque_quantities_are_nan() -> None:
    out = derive_samples(bus_voltage_v=[11.0], bus_current_a=[7.0], rpm=[12000.0], thrust_n=[2.0], diameter_m=0.127,
                         density_kg_m3=1.2)
    assert np.isnan(out.power_coefficient[0]) and np.isnan(out.shaft_power_w[0]) and np.isnan(out.drive_efficiency[0])
    assert out.thrust_coefficient[0] == pytest.approx(2.0 / (1.2 * 200.0**2 * 0.127**4))
