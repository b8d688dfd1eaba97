"""Collapsed-supply and inconsistent-row flags: synthetic sweeps and the bench-5in reference data.

Reference data: StrawsonDesign/motor_propeller_testing (P. Cao, J. Strawson, 2018, MIT licence), via
tests/data/reference/PROVENANCE.md; its ``supply_limited`` column marks rows where the bench supply hit its
~11 A current limit.
"""

from __future__ import annotations

import numpy as np

from server.bench_runs.flags import FlagReason, flag_samples
from tests.bench_runs.reference import load_tests

THROTTLE = np.linspace(0.1, 1.0, 10)


def healthy_sweep() -> tuple[np.ndarray, ...]:
    current = 12.0 * THROTTLE**2
    voltage = 11.1 - 0.03 * current  # a stiff supply with 30 mΩ of leads
    thrust = 4.5 * THROTTLE**2
    rpm = 20000 * THROTTLE
    return THROTTLE, voltage, current, rpm, thrust


def test_healthy_sweep_has_no_flags() -> None:
    assert flag_samples(*healthy_sweep()).count == 0


def test_collapsed_supply_is_flagged_with_its_reason() -> None:
    throttle, voltage, current, rpm, thrust = (a.copy() for a in healthy_sweep())
    # the supply limits at 9 A: from throttle 0.9 on, current sits at the limit, voltage collapses, thrust falls
    limited = current > 9.0
    current[limited] = 9.0 + np.array([0.02, -0.01])
    voltage[limited] = [9.4, 8.3]
    thrust[limited] = [thrust[~limited][-1] * 1.01, thrust[~limited][-1] * 0.95]
    flags = flag_samples(throttle, voltage, current, rpm, thrust)
    collapsed = flags.mask(FlagReason.SUPPLY_COLLAPSED)
    np.testing.assert_array_equal(collapsed, limited)
    assert flags.reasons[-1] == (FlagReason.SUPPLY_COLLAPSED,)
    assert flags.expected_bus_voltage_v[-1] > 10.7  # compared with the low-load trend, not with itself


def test_rows_in_any_order_give_the_same_flags() -> None:
    throttle, voltage, current, rpm, thrust = healthy_sweep()
    voltage = voltage.copy()
    voltage[-1] = 9.0  # collapsed at the top, thrust still rises by 23 %: voltage alone is a marked sag
    order = np.random.default_rng(1).permutation(throttle.size)
    a = flag_samples(throttle, voltage, current, rpm, thrust).mask(FlagReason.SUPPLY_COLLAPSED)
    b = flag_samples(throttle[order], voltage[order], current[order], rpm[order], thrust[order])
    np.testing.assert_array_equal(b.mask(FlagReason.SUPPLY_COLLAPSED), a[order])
    assert a[-1] and a.sum() == 1


def test_inconsistent_rows() -> None:
    throttle, voltage, current, rpm, thrust = (a.copy() for a in healthy_sweep())
    rpm[3], rpm[4], current[5], thrust[6], rpm[0], thrust[0] = 0.0, np.nan, 0.0, -0.01, 0.0, 0.0
    flags = flag_samples(throttle, voltage, current, rpm, thrust)
    assert flags.reasons[3] == (FlagReason.RPM_MISSING,)
    assert flags.reasons[4] == (FlagReason.RPM_MISSING,)
    assert flags.reasons[5] == (FlagReason.NO_CURRENT,)
    assert flags.reasons[6] == (FlagReason.NO_THRUST, FlagReason.THRUST_OFFSET)  # -0.01 N: a load-cell offset
    assert flags.reasons[0] == (FlagReason.MOTOR_STOPPED,)
    assert flags.count == 5
    rpm[1] = 290.0  # a tachometer that has not locked on: thrust 0.18 N at 290 rpm
    assert flag_samples(throttle, voltage, current, rpm, thrust).reasons[1] == (FlagReason.RPM_IMPLAUSIBLE,)
    rpm[1] = 29.0  # below MIN_TURNING_RPM it counts as no reading at all
    assert flag_samples(throttle, voltage, current, rpm, thrust).reasons[1] == (FlagReason.RPM_MISSING,)
    rpm[0], thrust[0] = 2.0, 0.0127  # bench-5in's idle rows read 1-2 rpm with the motor stopped
    assert flag_samples(throttle, voltage, current, rpm, thrust).reasons[0] == (FlagReason.MOTOR_STOPPED,)


def test_reference_supply_limited_rows_are_flagged() -> None:
    # bench-5in: the authors' supply_limited rows vs our collapse flag (precision and recall over all 184 tests).
    # The detector's thresholds (2.5 % sag at the current plateau, or 1 % with stalled thrust) were set
    # after looking at these data, so this is a consistency check, not an independent validation.
    tp = fp = fn = 0
    for t in load_tests().values():
        flagged = flag_samples(t.throttle, t.bus_voltage_v, t.current_a, t.rpm, t.thrust_n).mask(
            FlagReason.SUPPLY_COLLAPSED)
        tp += int(np.sum(flagged & t.supply_limited))
        fp += int(np.sum(flagged & ~t.supply_limited))
        fn += int(np.sum(~flagged & t.supply_limited))
    precision, recall = tp / (tp + fp), tp / (tp + fn)
    # measured: 95 of 97 limited rows flagged, no false flag (precision 1.00, recall 0.98)
    assert tp + fn == 97
    assert precision >= 0.95
    assert recall >= 0.95
