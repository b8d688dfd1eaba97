"""Multirotor flight state: Glauert inflow, trim, descent rule, coaxial factor, shaft power with a measured propeller.

Check cases FLT-1..9 of docs/model-reference.md#multirotor-flight-state-check-cases.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import brentq, fsolve

from server.physics import forward_flight as ff

REFERENCE = Path(__file__).resolve().parents[1] / "data" / "reference" / "propellers"
G0 = 9.80665
RHO = 1.225


def test_hover_limit_is_one() -> None:
    # FLT-1 [PUB] Leishman 2006, ch. 2: no free stream, v_i = v_h (lam = 1); tol 1e-12
    assert float(ff.glauert_inflow_ratio(0.0, 0.0)) == pytest.approx(1.0, rel=1e-12)


def test_axial_climb_is_the_momentum_climb_solution() -> None:
    # FLT-2 [PUB] Leishman 2006, ch. 2: v_i = -V_c/2 + sqrt(V_c^2/4 + v_h^2); V_c = 3 m/s, v_h = 6 m/s
    # (T = 4.41 N per rotor on A = 0.05 m^2 at rho 1.225) -> 4.68465843843 m/s; tol 1e-10
    state = ff.flight_state(4 * 4.41, 4, 0.05, RHO, airspeed_m_s=0.0, climb_rate_m_s=3.0)
    assert float(state.hover_induced_velocity_m_s) == pytest.approx(6.0, rel=1e-12)
    assert float(state.induced_velocity_m_s) == pytest.approx(-1.5 + math.sqrt(2.25 + 36.0), rel=1e-10)
    assert float(state.induced_velocity_m_s) == pytest.approx(4.68465843843, rel=1e-10)
    assert float(state.tilt_rad) == 0.0
    # The ideal power is T (v_i + V_c): induced plus climb power W V_c / N.
    assert float(state.ideal_power_w) == pytest.approx(4.41 * (4.68465843843 + 3.0), rel=1e-10)


def test_edgewise_level_flight_closed_form() -> None:
    # FLT-3 [PUB] Glauert's equation at zero disk incidence (Leishman 2006, ch. 2): lam^4 + m^2 lam^2 - 1 = 0,
    # lam^2 = -m^2/2 + sqrt(m^4/4 + 1); m = 2 -> lam = sqrt(sqrt(5) - 2) = 0.485868271757; tol 1e-12
    lam = float(ff.glauert_inflow_ratio(2.0, 0.0))
    assert lam == pytest.approx(math.sqrt(math.sqrt(5.0) - 2.0), rel=1e-12)
    assert lam == pytest.approx(0.485868271757, rel=1e-11)


def test_high_speed_limit() -> None:
    # FLT-4 [PUB] Leishman 2006, ch. 2: at high speed v_i -> v_h^2 / V = T / (2 rho A V); m = 50, x = 0.3:
    # lam m = 0.99998; tol 1e-4
    assert float(ff.glauert_inflow_ratio(50.0, 0.3)) * 50.0 == pytest.approx(1.0, rel=1e-4)


def test_inclined_disk_equals_the_largest_real_root_of_the_quartic() -> None:
    # FLT-5 [LIB] numpy.roots of lam^4 + 2x lam^3 + (m^2 + x^2) lam^2 - 1 (numpy 2.x); m = 1.2, x = 0.4:
    # lam = 0.631857967610; tol 1e-10. And a grid of cases, climb to steep descent, converged to 1e-10.
    lam = float(ff.glauert_inflow_ratio(1.2, 0.4))
    roots = np.roots([1.0, 0.8, 1.2**2 + 0.16, 0.0, -1.0])
    assert lam == pytest.approx(max(r.real for r in roots if abs(r.imag) < 1e-12), rel=1e-10)
    assert lam == pytest.approx(0.631857967610, rel=1e-10)
    m, x = np.meshgrid(np.linspace(0.0, 6.0, 25), np.linspace(-3.0, 4.0, 29))
    lam = ff.glauert_inflow_ratio(m, x)
    residual = lam * np.sqrt(m * m + (x + lam) ** 2) - 1.0
    assert np.all(np.abs(residual) < 1e-10)
    assert np.all(lam > 0)


def test_trim_of_a_quad_in_forward_flight() -> None:
    # FLT-6 [CALC] 2.4 kg quad, C_D A = 0.03 m^2, V = 12 m/s, rho 1.225, A = 0.05 m^2 per rotor:
    # D = 1/2 1.225 144 0.03 = 2.6460 N; tilt = atan(2.646 / 23.53596) = 6.41447 deg;
    # T = hypot(2.646, 23.53596) / 4 = 5.92106 N; v_h = 6.95235 m/s; v_i = 3.73008 m/s; ideal 30.0240 W; tol 1e-5
    state = ff.flight_state(2.4 * G0, 4, 0.05, RHO, airspeed_m_s=12.0, drag_area_m2=0.03)
    assert float(state.drag_n) == pytest.approx(2.6460, rel=1e-5)
    assert math.degrees(float(state.tilt_rad)) == pytest.approx(6.41447, rel=1e-5)
    assert float(state.thrust_n) == pytest.approx(5.92106, rel=1e-5)
    assert float(state.hover_induced_velocity_m_s) == pytest.approx(6.95235, rel=1e-5)
    assert float(state.induced_velocity_m_s) == pytest.approx(3.73008, rel=1e-5)
    assert float(state.ideal_power_w) == pytest.approx(30.0240, rel=1e-5)
    # Energy balance: N T (v_i + V_perp) = N T v_i + D V + W V_c (level: no climb power)
    n_t = 4 * float(state.thrust_n)
    assert 4 * float(state.ideal_power_w) == pytest.approx(n_t * float(state.induced_velocity_m_s) + 2.646 * 12.0,
                                                           rel=1e-12)


def test_descent_gets_no_credit_below_level_flight() -> None:
    # FLT-7 [CP] our conservative descent rule (momentum theory fails in the vortex-ring state, Leishman 2006, ch. 2):
    # an axial descent at 2 m/s costs the hover ideal power T v_h (36.8259 W per rotor for the 2.4 kg quad on
    # 11-inch disks); a descent at 12 m/s forward costs what level flight does; tol 1e-12
    area = math.pi * 0.2794**2 / 4.0
    hover = ff.flight_state(2.4 * G0, 4, area, RHO)
    descent = ff.flight_state(2.4 * G0, 4, area, RHO, climb_rate_m_s=-2.0)
    assert float(descent.ideal_power_w) == pytest.approx(float(hover.ideal_power_w), rel=1e-12)
    assert float(hover.ideal_power_w) == pytest.approx(36.8259, rel=1e-5)
    level = ff.flight_state(2.4 * G0, 4, area, RHO, airspeed_m_s=12.0, drag_area_m2=0.03)
    gliding = ff.flight_state(2.4 * G0, 4, area, RHO, airspeed_m_s=12.0, climb_rate_m_s=-2.0, drag_area_m2=0.03)
    assert float(gliding.ideal_power_w / gliding.thrust_n) == pytest.approx(
        float(level.ideal_power_w / level.thrust_n), rel=1e-12)
    climbing = ff.flight_state(2.4 * G0, 4, area, RHO, airspeed_m_s=12.0, climb_rate_m_s=2.0, drag_area_m2=0.03)
    assert float(climbing.ideal_power_w) > float(level.ideal_power_w)


def test_coaxial_factor_from_momentum_theory() -> None:
    # FLT-8 [CALC] + [PUB] Leishman 2006, ch. 4: lower rotor in the fully contracted upper wake (area A/2, 2 v_h),
    # equal thrusts. Unknowns s = v_u + v_l (mean velocity at the lower disk) and w (far wake):
    # T = rho A s w - 2 rho A v_h^2 (momentum), T s = 1/2 rho A s w^2 - 2 rho A v_h^3 (energy), T = 2 rho A v_h^2.
    # Solved numerically here; lower-rotor factor s / v_h = (sqrt(17) - 1)/2 = 1.561553, pair 1.280776; tol 1e-9
    rho, area, v_h = 1.0, 1.0, 1.0
    thrust = 2.0 * rho * area * v_h**2

    def equations(z: np.ndarray) -> list[float]:
        s, w = z
        return [rho * area * s * w - 2.0 * rho * area * v_h**2 - thrust,
                0.5 * rho * area * s * w * w - 2.0 * rho * area * v_h**3 - thrust * s]

    s, _ = fsolve(equations, [1.5, 2.5], xtol=1e-14)
    assert s == pytest.approx(ff.LOWER_ROTOR_INDUCED_FACTOR, rel=1e-9)
    assert ff.LOWER_ROTOR_INDUCED_FACTOR == pytest.approx(1.561553, rel=1e-6)
    assert ff.COAXIAL_INDUCED_FACTOR == pytest.approx(1.280776, rel=1e-6)
    # Applied to the induced part: a coaxial hover's ideal power is 1.2808 T v_h.
    state = ff.flight_state(8 * 5.0, 8, 0.05, RHO, coaxial=True)
    assert float(state.ideal_power_w) == pytest.approx(1.280776 * float(state.hover_ideal_power_w), rel=1e-6)


def _static_table(name: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    with (REFERENCE / "static" / f"{name}.csv").open() as f:
        rows = [(float(r["rpm"]), float(r["ct"]), float(r["cp"])) for r in csv.DictReader(f)]
    rpm, ct, cp = (np.array(c) for c in zip(*rows, strict=True))
    return rpm, ct, cp


def _shaft_power_w(state: ff.FlightState, diameter_m: float, table: tuple[np.ndarray, ...]) -> tuple[float, float]:
    """(corrected shaft power, static shaft power) of the UIUC propeller at the state's thrust."""
    rpm_k, ct_k, cp_k = table
    thrust = float(state.thrust_n)
    rpm = brentq(lambda r: np.interp(r, rpm_k, ct_k) * RHO * (r / 60) ** 2 * diameter_m**4 - thrust, 1000, 9000,
                 xtol=1e-10)
    static = float(np.interp(rpm, rpm_k, cp_k) * RHO * (rpm / 60) ** 3 * diameter_m**5)
    return float(ff.shaft_power_w(static, rpm * math.pi / 30, diameter_m / 2, state)), static


def test_two_point_four_kilogram_quad_forward_flight_against_hover() -> None:
    # FLT-9 [DATA] tests/data/reference/propellers/static/sf_11x4.7_b2.csv (UIUC Propeller Database, vol. 1) + [CALC]:
    # 2.4 kg quad, 11-inch props, C_D A 0.02-0.04 m^2 at 8-15 m/s. Ideal (momentum) power 0.642-0.980 of hover;
    # shaft power with the measured propeller (non-ideal part kept and grown by 1 + 4.65 mu^2) 0.784-1.053 of hover
    # (the "15-35 % below hover" is the ideal figure at low drag); tol 1e-3
    diameter = 0.2794
    area = math.pi * diameter**2 / 4.0
    table = _static_table("sf_11x4.7_b2")
    weight = 2.4 * G0
    hover = ff.flight_state(weight, 4, area, RHO)
    _, hover_power = _shaft_power_w(hover, diameter, table)
    ideal, shaft = [], []
    for drag_area in (0.02, 0.03, 0.04):
        for speed in (8.0, 10.0, 12.0, 15.0):
            state = ff.flight_state(weight, 4, area, RHO, airspeed_m_s=speed, drag_area_m2=drag_area)
            power, _ = _shaft_power_w(state, diameter, table)
            assert power >= float(state.ideal_power_w)  # the momentum guard
            ideal.append(float(state.ideal_power_w / hover.ideal_power_w))
            shaft.append(power / hover_power)
    assert min(ideal) == pytest.approx(0.642, abs=1e-3)
    assert max(ideal) == pytest.approx(0.980, abs=1e-3)
    assert min(shaft) == pytest.approx(0.784, abs=1e-3)
    assert max(shaft) == pytest.approx(1.053, abs=1e-3)


def test_shaft_power_never_below_ideal_and_static_in_hover() -> None:
    # Guard: with FM <= 1 (P_static >= T v_h) the corrected power is at least the ideal power, for any state.
    rng = np.random.default_rng(7)
    n = 500
    state = ff.flight_state(rng.uniform(5, 60, n), 4, rng.uniform(0.01, 0.2, n), RHO,
                            airspeed_m_s=rng.uniform(0, 25, n), climb_rate_m_s=rng.uniform(-5, 5, n),
                            drag_area_m2=rng.uniform(0, 0.1, n))
    static = state.hover_ideal_power_w / rng.uniform(0.3, 1.0, n)  # FM between 0.3 and 1
    omega = rng.uniform(300, 3000, n)
    power = ff.shaft_power_w(static, omega, 0.12, state)
    assert np.all(power >= state.ideal_power_w * (1 - 1e-12))
    # Hover without climb: exactly the static power (the correction is T v_h - T v_h = 0 up to rounding).
    hover = ff.flight_state(20.0, 4, 0.05, RHO)
    assert float(ff.shaft_power_w(70.0, 800.0, 0.12, hover)) == pytest.approx(70.0, rel=1e-12)
