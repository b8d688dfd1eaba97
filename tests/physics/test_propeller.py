"""Propeller: coefficient algebra, momentum theory (PROP-1..9) and padded coefficient tables."""

from __future__ import annotations

import math

import numpy as np
import pytest

from server.physics import propeller as prop
from server.physics._types import RAD_S_PER_RPM
from server.physics.propeller import PropellerTable

D_10IN_M = 0.254
RHO0 = 1.225
G0 = 9.80665


def test_coefficient_form_prop_1() -> None:
    # PROP-1 [DATA] UIUC sf_10x7_static_kt0827 (Brandt & Selig 2011) + [CALC]; tol 1e-4
    n = 5015.0 / 60.0
    assert n == pytest.approx(83.5833, rel=1e-4)
    assert prop.thrust_n(0.1564, RHO0, n, D_10IN_M) == pytest.approx(5.5712, rel=1e-4)
    assert prop.shaft_power_w(0.0763, RHO0, n, D_10IN_M) == pytest.approx(57.702, rel=1e-4)
    assert prop.torque_nm(0.0763, RHO0, n, D_10IN_M) == pytest.approx(0.10987, rel=1e-4)
    assert prop.torque_coefficient(0.0763) == pytest.approx(0.012144, rel=1e-4)
    # P = 2πnQ, never nQ (docs/model-reference.md#conventions)
    assert prop.shaft_power_w(0.0763, RHO0, n, D_10IN_M) == pytest.approx(
        2 * math.pi * n * prop.torque_nm(0.0763, RHO0, n, D_10IN_M), rel=1e-12)


def test_figure_of_merit_three_ways_prop_2() -> None:
    # PROP-2 [PUB] Leishman 2006 momentum theory + [CALC]; tol 1e-4
    n = 5015.0 / 60.0
    thrust = prop.thrust_n(0.1564, RHO0, n, D_10IN_M)
    power = prop.shaft_power_w(0.0763, RHO0, n, D_10IN_M)
    assert prop.disk_area_m2(D_10IN_M) == pytest.approx(0.050671, rel=1e-4)
    assert prop.ideal_hover_power_w(thrust, RHO0, D_10IN_M) == pytest.approx(37.3215, rel=1e-4)
    assert prop.figure_of_merit(0.1564, 0.0763) == pytest.approx(0.6468, rel=1e-4)
    assert prop.figure_of_merit_from_power(thrust, power, RHO0, D_10IN_M) == pytest.approx(0.6468, rel=1e-4)
    ct_r, cp_r = prop.rotor_thrust_coefficient(0.1564), prop.rotor_power_coefficient(0.0763)
    assert ct_r == pytest.approx(0.020177, rel=1e-4)
    assert cp_r == pytest.approx(0.003133, rel=1e-4)
    assert prop.figure_of_merit_rotor(ct_r, cp_r) == pytest.approx(0.6468, rel=1e-4)


def test_forward_point_prop_3() -> None:
    # PROP-3 [DATA] UIUC sf_10x7_kt0833_6006 (Brandt & Selig 2011) + [CALC]
    n = 6006.0 / 60.0
    eta = prop.propeller_efficiency(0.312, 0.1282, 0.0777)
    assert eta == pytest.approx(0.5148, abs=0.002)
    assert eta == pytest.approx(0.516, abs=0.005)  # the file's own (rounded) value
    v = 0.312 * n * D_10IN_M
    assert v == pytest.approx(7.9327, rel=1e-4)
    assert prop.advance_ratio(v, n, D_10IN_M) == pytest.approx(0.312, rel=1e-12)
    assert prop.thrust_n(0.1282, RHO0, n, D_10IN_M) == pytest.approx(6.5498, rel=1e-4)
    assert prop.shaft_power_w(0.0777, RHO0, n, D_10IN_M) == pytest.approx(100.93, rel=1e-4)


def test_hover_momentum_theory_prop_4() -> None:
    # PROP-4 [PUB] Leishman 2006 + [CALC]: 2.000 kg quad, 10 in props, sea level; tol 1e-4
    thrust = 2.0 * G0 / 4
    assert thrust == pytest.approx(4.90332, rel=1e-4)
    assert prop.induced_velocity_hover_m_s(thrust, RHO0, D_10IN_M) == pytest.approx(6.2847, rel=1e-4)
    p_ideal = prop.ideal_hover_power_w(thrust, RHO0, D_10IN_M)
    assert p_ideal == pytest.approx(30.8159, rel=1e-4)
    assert 4 * p_ideal == pytest.approx(123.263, rel=1e-4)
    assert 4 * p_ideal / 0.6 == pytest.approx(205.44, rel=1e-4)
    assert prop.specific_thrust_g_per_w(thrust, p_ideal) == pytest.approx(16.225, rel=1e-4)
    assert prop.specific_thrust_g_per_w(thrust, p_ideal / 0.65) == pytest.approx(10.547, rel=1e-4)


def test_hover_at_altitude_prop_5() -> None:
    # PROP-5 [CALC] with [LIB] fluids density at 2000 m
    assert prop.ideal_hover_power_w(4.90332, 1.006553, D_10IN_M) == pytest.approx(33.9957, rel=1e-4)


def test_axial_climb_prop_6() -> None:
    # PROP-6 [PUB] Leishman 2006 + [CALC]
    power = prop.ideal_climb_power_w(4.90332, np.array([2.0, 5.0]), RHO0, D_10IN_M)
    np.testing.assert_allclose(power, [36.1068, 45.4228], rtol=1e-4)
    assert prop.ideal_climb_power_w(4.90332, 0.0, RHO0, D_10IN_M) == pytest.approx(
        prop.ideal_hover_power_w(4.90332, RHO0, D_10IN_M), rel=1e-12)


def test_froude_efficiency_prop_7() -> None:
    # PROP-7 [PUB] momentum theory + [CALC]; also the coefficient form 2/(1+sqrt(1+8CT/(pi J^2)))
    eta = prop.froude_efficiency(2.0, 10.0, RHO0, D_10IN_M)
    assert eta == pytest.approx(0.87629, rel=1e-4)
    n = 100.0
    ct = 2.0 / (RHO0 * n**2 * D_10IN_M**4)
    j = 10.0 / (n * D_10IN_M)
    assert eta == pytest.approx(2.0 / (1.0 + math.sqrt(1.0 + 8.0 * ct / (math.pi * j**2))), rel=1e-12)


def test_tip_mach_and_reynolds_prop_8() -> None:
    # PROP-8 [CALC] with [LIB] ambiance a = 340.294, fluids mu = 1.78938e-5; c = 0.197 R (UIUC geom)
    omega = 817.479
    assert prop.tip_speed_m_s(omega, D_10IN_M) == pytest.approx(103.82, rel=1e-3)
    assert prop.tip_mach_number(omega, D_10IN_M, 340.294) == pytest.approx(0.3051, rel=1e-3)
    chord = 0.197 * D_10IN_M / 2
    assert prop.blade_reynolds_number(omega, D_10IN_M, chord, RHO0, 1.78938e-5) == pytest.approx(1.334e5, rel=1e-3)


@pytest.mark.parametrize(("ct", "cp", "fm"), [
    (0.1158, 0.0466, 0.6747),  # UIUC sf_10x4.7_static_kt0835 @ 4029 rpm (Vol. 1, Brandt & Selig 2011)
    (0.095587, 0.028545, 0.8261),  # UIUC te_16x8_static_2150od @ 4993.333 rpm (Vol. 4)
    (0.125903, 0.110555, 0.3224),  # UIUC ff_4.2x4_static_0615rd @ 4006.667 rpm (Vol. 2, Deters et al. 2014)
])
def test_figure_of_merit_of_uiuc_rows_prop_9(ct: float, cp: float, fm: float) -> None:
    # PROP-9 [DATA] + [CALC]; tol 1e-3
    assert prop.figure_of_merit(ct, cp) == pytest.approx(fm, rel=1e-3)


def test_thrust_and_torque_constants_of_the_op_cases() -> None:
    # docs/model-reference.md#operating-point-check-cases [CALC]: kT = 2.019984e-5, kQ = 3.983727e-7 (PROP-1)
    assert prop.thrust_constant_n_s2(0.1564, RHO0, D_10IN_M) == pytest.approx(2.019984e-5, rel=1e-6)
    assert prop.torque_constant_nm_s2(0.0763, RHO0, D_10IN_M) == pytest.approx(3.983727e-7, rel=1e-6)


# --- tables -----------------------------------------------------------------------------------------

def _two_props() -> PropellerTable:
    # invented coefficients (not data): one 3-point and one 2-point table, padded with NaN
    return PropellerTable.from_rows([0.254, 0.2286], [
        ([3000.0, 5000.0, 7000.0], [0.10, 0.12, 0.13], [0.040, 0.045, 0.050]),
        ([6000.0, 2000.0], [0.14, 0.11], [0.060, 0.050]),  # unsorted on purpose
    ])


def test_from_rows_pads_with_nan_and_sorts() -> None:
    table = _two_props()
    assert table.axis_values.shape == (2, 3)
    assert np.isnan(table.axis_values[1, 2]) and np.isnan(table.thrust_coefficient[1, 2])
    np.testing.assert_array_equal(table.axis_values[1, :2], [2000.0, 6000.0])
    np.testing.assert_array_equal(table.thrust_coefficient[1, :2], [0.11, 0.14])


def test_padded_interpolation_equals_numpy_interp_per_row() -> None:
    table = _two_props()
    rpm = np.array([[1000.0, 2500.0, 4000.0, 5000.0, 6500.0, 9000.0]]).T  # (6, 1) x (2,) -> (6, 2)
    omega = rpm * RAD_S_PER_RPM
    ct, cp = prop.coefficients_at(table, omega)
    assert ct.shape == (6, 2)
    for row in range(2):
        valid = ~np.isnan(table.axis_values[row])
        # numpy.interp holds the end values outside the table, like the reference model
        # (docs/model-reference.md#reference-model-v1 item 2)
        np.testing.assert_allclose(ct[:, row], np.interp(rpm[:, 0], table.axis_values[row, valid],
                                                         table.thrust_coefficient[row, valid]), rtol=1e-12)
        np.testing.assert_allclose(cp[:, row], np.interp(rpm[:, 0], table.axis_values[row, valid],
                                                         table.power_coefficient[row, valid]), rtol=1e-12)


def test_constant_table_and_nan_query() -> None:
    table = PropellerTable.constant(0.254, [0.1, 0.2], [0.05, 0.06])
    ct, cp = prop.coefficients_at(table, np.array([0.0, 500.0, np.nan])[:, None])
    np.testing.assert_array_equal(ct[:2], [[0.1, 0.2], [0.1, 0.2]])
    assert np.all(np.isnan(ct[2])) and np.all(np.isnan(cp[2]))


def test_one_point_row_in_a_padded_table_is_constant() -> None:
    table = PropellerTable.from_rows(0.254, [([4000.0], [0.1], [0.05]), ([1.0, 2.0], [0.2, 0.3], [0.1, 0.1])])
    ct, _ = prop.coefficients_at(table, np.array([[10.0], [1e4]]))
    np.testing.assert_allclose(ct[:, 0], [0.1, 0.1])


def test_take_builds_a_candidate_chunk_from_a_library() -> None:
    table = _two_props()
    chunk = table.take([1, 0, 1, 1])
    assert chunk.axis_values.shape == (4, 3)
    np.testing.assert_array_equal(chunk.diameter_m, [0.2286, 0.254, 0.2286, 0.2286])
    ct, _ = prop.coefficients_at(chunk, np.full(4, 4000.0 * 2 * math.pi / 60))
    np.testing.assert_allclose(ct, [0.125, 0.11, 0.125, 0.125])


def test_advance_ratio_table_uses_j_and_holds_the_last_row_at_zero_speed() -> None:
    table = PropellerTable.from_rows(0.254, [([0.0, 0.4, 0.8], [0.12, 0.08, -0.01], [0.05, 0.045, 0.02])],
                                     axis="advance_ratio")
    n = 100.0
    v = 0.2 * n * 0.254  # J = 0.2
    ct, cp = prop.coefficients_at(table, np.array([2 * math.pi * n, 0.0]), v)
    np.testing.assert_allclose(ct, [0.10, -0.01], rtol=1e-12)
    np.testing.assert_allclose(cp, [0.0475, 0.02], rtol=1e-12)


def test_unknown_axis_is_rejected() -> None:
    with pytest.raises(ValueError, match="axis"):
        PropellerTable(0.254, [[1.0]], [[0.1]], [[0.05]], axis="pitch")  # type: ignore[arg-type]
