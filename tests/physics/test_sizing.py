"""Sizing rules: RULE-1..5 (common practice [CP], flight mechanics per Anderson 1999)."""

from __future__ import annotations

import numpy as np
import pytest

from server.physics import drive, sizing
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable


def test_thrust_floor_rule_1() -> None:
    # RULE-1 [CP] T/W >= 2 (common practice, no source) + [CALC]; tol 1e-6
    assert sizing.weight_n(2.0) == pytest.approx(19.6133, rel=1e-6)
    assert sizing.required_max_thrust_per_rotor_n(2.0, 1) == pytest.approx(39.2266, rel=1e-6)
    assert sizing.required_max_thrust_per_rotor_n(2.0, 4) == pytest.approx(9.8066, rel=1e-5)  # printed 5 digits


def test_op_5_system_rule_2() -> None:
    # RULE-2 [CALC]: the OP-5 quad; T/W 2.1460, hover fraction 0.4660, hover duty 0.5362; tol 1e-4
    system = {"motor": MotorParams(920.0, 0.10, 0.5, inductance_h=np.inf), "esc": EscParams.lossless_switching(0.0),
              "propeller": PropellerTable.constant(0.254, 0.1564, 0.0763), "open_circuit_voltage_v": 12.0,
              "pack_resistance_ohm": 0.030, "rotor_count": 4}
    full = drive.full_throttle(**system)  # type: ignore[arg-type]
    hover = drive.for_thrust(sizing.hover_thrust_per_rotor_n(2.0, 4), **system)  # type: ignore[arg-type]
    ratio = sizing.thrust_to_weight(full.total_thrust_n, 2.0)
    assert ratio == pytest.approx(2.1460, rel=1e-4)
    assert ratio >= sizing.DEFAULT_THRUST_TO_WEIGHT
    assert hover.thrust_n / full.thrust_n == pytest.approx(0.4660, rel=1e-4)
    assert hover.duty == pytest.approx(0.5362, rel=1e-4)
    # docs/model-reference.md#sizing-rules: the hover duty is neither the thrust fraction nor its square root
    assert abs(hover.duty - 0.4660) > 0.05 and abs(hover.duty - np.sqrt(0.4660)) > 0.1


def test_fixed_wing_rule_3() -> None:
    # RULE-3 [PUB] flight mechanics (Anderson 1999) + [CALC]; tol 1e-4
    cruise = sizing.fixed_wing_cruise_thrust_n(20.0, 10.0)
    climb = sizing.fixed_wing_climb_thrust_n(20.0, 10.0, 3.0, 15.0)
    assert cruise == pytest.approx(2.000, rel=1e-4)
    assert climb == pytest.approx(5.9596, rel=1e-4)
    assert sizing.fixed_wing_climb_thrust_n(20.0, 10.0, 3.0, 15.0, small_angle=True) == pytest.approx(6.000, rel=1e-4)
    assert sizing.propulsive_shaft_power_w(cruise, 15.0, 0.6) == pytest.approx(50.000, rel=1e-4)
    assert sizing.propulsive_shaft_power_w(climb, 15.0, 0.6) == pytest.approx(148.990, rel=1e-4)


def test_esc_margin_rule_4() -> None:
    # RULE-4 [CP] ESC 1.2-1.3 x the d = 1 current (common practice, no source) + [CALC]
    low, high = sizing.esc_current_rating_a(26.1484, np.array(sizing.ESC_CURRENT_MARGIN_RANGE))
    assert low == pytest.approx(31.378, rel=1e-4)
    assert high == pytest.approx(33.993, rel=1e-4)


def test_hover_fraction_rule_5() -> None:
    # RULE-5 [CALC]; exact
    np.testing.assert_allclose(sizing.hover_thrust_fraction([2.0, 3.0, 4.0]), [0.5, 1 / 3, 0.25], rtol=1e-15)
