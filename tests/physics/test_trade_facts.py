"""Trade fact (common practice, no source): for a fixed motor and propeller, motor+ESC efficiency at a given
thrust is best near full throttle, i.e. on the lowest pack voltage that still reaches that thrust."""

from __future__ import annotations

import numpy as np

from server.physics import drive
from server.physics._types import Status
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable


def test_drive_efficiency_is_best_near_full_throttle() -> None:
    # trade fact (common practice, no source); model per docs/model-reference.md#esc (Mohan 2003 / Erickson 2001
    # loss terms).
    # Motor 920 Kv / 0.10 Ω / 0.5 A and the 10x7 prop (UIUC sf_10x7 @ 5015 rpm, Brandt & Selig 2011).
    motor = MotorParams(920.0, 0.10, 0.5)
    propeller = PropellerTable.constant(0.254, 0.1564, 0.0763)
    voltages = np.array([7.4, 11.1, 14.8, 18.5, 22.2])[:, np.newaxis]  # 2S .. 6S nominal, stiff buses
    thrusts = np.array([2.0, 4.0, 6.0])[np.newaxis, :]
    op = drive.for_thrust(thrusts, motor=motor, esc=EscParams(), propeller=propeller,
                          open_circuit_voltage_v=voltages)
    assert np.all(op.status == Status.OK)
    for k in range(thrusts.size):
        duty, eff = op.duty[:, k], op.drive_efficiency[:, k]
        # higher voltage -> lower duty -> lower drive efficiency, monotonically over the sweep
        assert np.all(np.diff(duty) < 0.0)
        assert np.all(np.diff(eff) < 0.0)
        assert np.argmax(eff) == np.argmax(duty)
    # and at full throttle itself nothing is lost to PWM: the same thrust at d = 1 beats every partial duty
    full = drive.full_throttle(motor=motor, esc=EscParams(), propeller=propeller, open_circuit_voltage_v=7.4)
    same = drive.for_thrust(full.thrust_n, motor=motor, esc=EscParams(), propeller=propeller,
                            open_circuit_voltage_v=voltages[1:, 0])
    assert np.all(same.drive_efficiency < full.drive_efficiency)
