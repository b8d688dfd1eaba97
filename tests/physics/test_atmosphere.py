"""Atmosphere: ATM-1..11 and the fluids package as the ISA reference."""

from __future__ import annotations

import numpy as np
import pytest
from fluids.atmosphere import ATMOSPHERE_1976
from scipy.optimize import brentq

from server.physics import atmosphere as atm

# ATM-1..4 [LIB] fluids 1.3.1 ATMOSPHERE_1976(Z) / ambiance 1.3.1; ISO 2533 rho0 = 1.225
ISA_ROWS = [  # Z [m], rho [kg/m3], T [K], p [Pa]
    (0.0, 1.224999, 288.1500, 101_325.000),
    (1000.0, 1.111659, 281.6510, 89_876.285),
    (2000.0, 1.006553, 275.1541, 79_501.425),
    (3000.0, 0.909254, 268.6592, 70_121.162),
]


@pytest.mark.parametrize(("z", "rho", "t", "p"), ISA_ROWS)
def test_isa_rows_match_atm_1_to_4(z: float, rho: float, t: float, p: float) -> None:
    # ATM-1..4 [LIB] fluids 1.3.1 ATMOSPHERE_1976; tol 1e-5
    assert atm.air_density_kg_m3(z) == pytest.approx(rho, rel=1e-5)
    assert atm.standard_temperature_k(z) == pytest.approx(t, rel=1e-5)
    assert atm.standard_pressure_pa(z) == pytest.approx(p, rel=1e-5)


def test_geopotential_pitfall_atm_5() -> None:
    # ATM-5 [CALC]: treating geometric altitude as geopotential gives these (wrong) densities
    rho = atm.air_density_kg_m3([1000.0, 2000.0, 3000.0], geopotential=True)
    np.testing.assert_allclose(rho, [1.111642, 1.006490, 0.909121], rtol=1e-6)
    # ... while the geometric default differs by 1.5e-5 .. 1.5e-4 rel (the size of the pitfall)
    geometric = atm.air_density_kg_m3([1000.0, 2000.0, 3000.0])
    assert np.all(geometric / rho - 1.0 > 1e-5)


@pytest.mark.parametrize(("z", "dt", "rho", "da_geometric", "da_geopotential"), [
    (1000.0, 20.0, 1.037954, 1693.2, 1692.7),  # ATM-6 [LIB] fluids ATMOSPHERE_1976(1000, dT=20)
    (0.0, 15.0, 1.164386, 525.5, None),  # ATM-7 [LIB] + [CALC]
    (2000.0, -10.0, 1.044514, 1630.0, None),  # ATM-8 [LIB] + [CALC]
])
def test_temperature_offset_and_density_altitude_atm_6_to_8(z: float, dt: float, rho: float, da_geometric: float,
                                                             da_geopotential: float | None) -> None:
    density = atm.air_density_kg_m3(z, temperature_offset_k=dt)
    assert density == pytest.approx(rho, rel=1e-5)
    assert atm.standard_pressure_pa(z) == pytest.approx(ATMOSPHERE_1976(z).P, rel=1e-9)  # pressure unchanged
    assert atm.density_altitude_m(density) == pytest.approx(da_geometric, abs=1.0)
    if da_geopotential is not None:
        assert atm.density_altitude_m(density, geopotential=True) == pytest.approx(da_geopotential, abs=1.0)


def test_outside_air_temperature_atm_9() -> None:
    # ATM-9 [CALC]: pressure altitude 1000 m, OAT 30 °C
    density = atm.air_density_kg_m3(1000.0, outside_air_temperature_k=atm.celsius_to_kelvin_k(30.0))
    assert density == pytest.approx(1.032822, rel=1e-5)
    assert atm.density_altitude_m(density) == pytest.approx(1742.8, abs=1.0)


def test_density_altitude_closed_form_matches_brentq_on_fluids() -> None:
    # ATM-6 method: brentq on fluids 1.3.1 ATMOSPHERE_1976(z).rho; agree to 0.1 m like for like
    for rho in (1.037954, 1.164386, 1.044514, 0.95):
        z = brentq(lambda zz, r=rho: ATMOSPHERE_1976(zz).rho - r, -1000.0, 8000.0, xtol=1e-6)
        assert atm.density_altitude_m(rho) == pytest.approx(z, abs=0.1)


def test_thrust_ratio_at_altitude_atm_10() -> None:
    # ATM-10 [CALC]: at fixed rpm thrust scales with rho
    assert atm.air_density_kg_m3(2000.0) / 1.225 == pytest.approx(0.821676, rel=1e-5)


def test_speed_of_sound_and_viscosity_atm_11() -> None:
    # ATM-11 [LIB] ambiance .speed_of_sound; fluids .v_sonic, .mu (US 1976 Sutherland law)
    t0 = atm.standard_temperature_k(0.0)
    assert atm.speed_of_sound_m_s(t0) == pytest.approx(340.294, rel=1e-5)
    assert atm.dynamic_viscosity_pa_s(t0) == pytest.approx(1.78938e-5, rel=1e-5)


@pytest.mark.parametrize("z", [0.0, 350.0, 1000.0, 2500.0, 4200.0, 6000.0, 10_500.0])
@pytest.mark.parametrize("dt", [-15.0, 0.0, 10.0, 25.0])
def test_matches_fluids_atmosphere_1976(z: float, dt: float) -> None:
    # fluids 1.3.1 ATMOSPHERE_1976(Z, dT): same standard and constants (docs/model-reference.md#air-check-cases)
    ref = ATMOSPHERE_1976(z, dT=dt)
    t = atm.air_temperature_k(z, dt)
    assert atm.air_density_kg_m3(z, dt) == pytest.approx(ref.rho, rel=1e-9)
    assert t == pytest.approx(ref.T, rel=1e-9)
    assert atm.standard_pressure_pa(z) == pytest.approx(ref.P, rel=1e-9)
    assert atm.speed_of_sound_m_s(t) == pytest.approx(ref.v_sonic, rel=1e-9)
    assert atm.dynamic_viscosity_pa_s(t) == pytest.approx(ref.mu, rel=1e-9)


def test_array_input_broadcasts_and_matches_scalars() -> None:
    z = np.array([[0.0, 1000.0], [2000.0, 3000.0]])
    dt = np.array([0.0, 20.0])
    rho = atm.air_density_kg_m3(z, dt)
    assert rho.shape == (2, 2)
    for idx in np.ndindex(z.shape):
        assert rho[idx] == atm.air_density_kg_m3(z[idx], dt[idx[1]])


def test_nan_in_nan_out_and_stratosphere_is_not_modelled() -> None:
    rho = atm.air_density_kg_m3([np.nan, 500.0, 12_000.0])
    assert np.isnan(rho[0]) and np.isfinite(rho[1])
    assert np.isnan(rho[2])  # above the tropopause: NaN, not a wrong troposphere value


def test_geopotential_round_trip() -> None:
    z = np.array([0.0, 1000.0, 3000.0, 10_000.0])
    np.testing.assert_allclose(atm.geometric_altitude_m(atm.geopotential_altitude_m(z)), z, atol=1e-9)
    # docs/model-reference.md#air: 1.5e-4 rel density difference at 3000 m comes from H < Z
    assert atm.geopotential_altitude_m(3000.0) == pytest.approx(2998.585, abs=1e-3)
