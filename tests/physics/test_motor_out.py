"""Motor-out: the thrust share a flat, alternating-spin multirotor keeps in trimmed hover after its worst single
motor failure, against the hand calculations in docs/model-reference.md#motor-out."""

from __future__ import annotations

import math

import numpy as np
import pytest

from server.physics import motor_out


def test_hand_calculations() -> None:
    # Hexa: stopping the rotor opposite the failed one leaves 2 CW + 2 CCW rotors at 60°, 120°, 240°, 300°:
    # balanced in roll, pitch and yaw, 4 of 6 rotors at full thrust (derived in the model reference).
    assert motor_out.worst_thrust_fraction(6) == pytest.approx(2.0 / 3.0, rel=1e-9)
    # Octo: the three rotors across from the failed one run at sqrt(2)-1, 2(sqrt(2)-1), sqrt(2)-1 of full
    # thrust, the other four at full: (4 + 4(sqrt(2)-1)) / 8 = 1/sqrt(2).
    assert motor_out.worst_thrust_fraction(8) == pytest.approx(1.0 / math.sqrt(2.0), rel=1e-9)
    # Quad: the three rotors left cannot cancel both the missing arm's moment and the yaw torque.
    assert motor_out.worst_thrust_fraction(4) == pytest.approx(0.0, abs=1e-12)


def test_every_failed_rotor_is_the_same_and_more_rotors_keep_more() -> None:
    for n in (6, 8, 10, 12):
        shares = [motor_out.thrust_fraction(n, j) for j in range(n)]
        assert max(shares) - min(shares) < 1e-9
    assert motor_out.worst_thrust_fraction(6) < motor_out.worst_thrust_fraction(8) \
        < motor_out.worst_thrust_fraction(12) < 1.0


def test_the_issue_rule_a_hexa_needs_about_three_intact_for_two_with_a_motor_out() -> None:
    """T/W 2.0 with a motor out needs T/W 3.0 intact on a hexa (2.0 / (2/3))."""
    assert 2.0 / motor_out.worst_thrust_fraction(6) == pytest.approx(3.0, rel=1e-9)


def test_the_octo_trim_balances_every_moment() -> None:
    n, s = 8, math.sqrt(2.0) - 1.0
    thrust = np.array([0.0, 1.0, 1.0, s, 2.0 * s, s, 1.0, 1.0])
    angles = 2.0 * math.pi * np.arange(n) / n
    spin = (-1.0) ** np.arange(n)
    assert abs(thrust @ np.cos(angles)) < 1e-12 and abs(thrust @ np.sin(angles)) < 1e-12
    assert abs(thrust @ spin) < 1e-12
    assert thrust.sum() / n == pytest.approx(motor_out.worst_thrust_fraction(8), rel=1e-9)
