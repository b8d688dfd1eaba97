"""Acceptance test of issue 4: calibrate on 7.4 V, predict the electrical power of 11.1 V runs at matched thrust.

Reference data: StrawsonDesign/motor_propeller_testing (P. Cao, J. Strawson, 2018, MIT licence), via
tests/data/reference/PROVENANCE.md — 5-inch motor/propeller sweeps on a bench supply at 7.4 V and 11.1 V,
one (undocumented) ESC for all motors, no torque channel.

Leave-one-motor-out: for each motor with 11.1 V runs, the pooled fit (server.physics.calibrate.fit_joint)
sees that motor's 7.4 V runs only, plus every run (both voltages) of all other motors — which is where the
shared ESC's k_pwm and the propellers' CT/CP tables come from. The held-out motor's 11.1 V runs are then
predicted with ``drive.for_thrust`` at each measured thrust, on a stiff bench supply at the measured bus
voltage (``pack_resistance_ohm=0``), and compared with the measured V·I.

Data treatment (decided before comparing variants, all variants reported in the issue's closing note):

- rows the authors marked ``supply_limited`` and rows our flags exclude (rpm missing, motor stopped,
  collapsed supply) are left out of calibration and evaluation;
- tests whose ``source_note`` says "low efficiency" (including "low and zero efficiency") are left out of
  both: the flag marks physically anomalous runs (m_b with p_4 makes 37 % less thrust at a given rpm than
  p_4 on every other motor, and would corrupt p_4's pooled CT table); tests flagged only "zero efficiency"
  or "thrust below 150 gf" are kept — their thrust at a given rpm agrees with the other runs of the same
  propeller within ±5 %, so their raw channels are sound;
- matched-thrust points below 0.5 N (51 gf, ~12 % of these runs' ~4 N maximum) are not scored: there the
  ESC's own idle draw (~0.5 W) and load-cell offsets (~0.01 N) dominate the relative error;
- a measured thrust the model cannot reach below full throttle (for_thrust: INFEASIBLE_THRUST) is scored
  with the model's full-throttle power at that bus voltage (what the ESC would do).

Un-calibrated baseline: the same pooled calibration of motors and propellers, but the ESC left at the
reference-model defaults (docs/model-reference.md#esc: every physical term at its default, k_pwm = 0 not fitted).
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass

import numpy as np
import pytest

from server.physics import drive
from server.physics._types import Status
from server.physics.calibrate import JointFit, fit_joint
from tests.bench_runs.reference import DENSITY_KG_M3, ReferenceTest, load_tests

MIN_THRUST_N = 0.5
GOAL_MEDIAN, GOAL_P90 = 0.05, 0.10


def excluded(test: ReferenceTest) -> bool:
    return re.search(r"\blow\b", test.source_note) is not None


@dataclass(frozen=True)
class CrossVoltage:
    errors: np.ndarray  # predicted / measured - 1 at every scored point
    infeasible: int
    tests: int
    fits: dict[str, JointFit]

    @property
    def median(self) -> float:
        return float(np.median(np.abs(self.errors)))

    @property
    def p90(self) -> float:
        return float(np.quantile(np.abs(self.errors), 0.9))


@functools.lru_cache(maxsize=2)  # shared with test_priors_and_bands.py within one run
def cross_voltage(fit_pwm_loss: bool) -> CrossVoltage:
    tests = {k: t for k, t in load_tests().items() if not excluded(t)}
    held_out = sorted({t.motor_id for t in tests.values() if t.supply_nominal_v > 10.0})
    errors: list[np.ndarray] = []
    infeasible = scored_tests = 0
    fits = {}
    for motor_id in held_out:
        train = [t.run_data() for t in tests.values() if not (t.motor_id == motor_id and t.supply_nominal_v > 10.0)]
        fit = fit_joint(train, fit_pwm_loss=fit_pwm_loss)
        assert fit.esc is not None
        fits[motor_id] = fit
        motor, esc = fit.motor_params(motor_id), fit.esc.esc_params()
        for t in tests.values():
            if t.motor_id != motor_id or t.supply_nominal_v < 10.0:
                continue
            ok = t.usable() & (t.thrust_n >= MIN_THRUST_N)
            if not ok.any():
                continue
            scored_tests += 1
            table = fit.propellers[t.propeller_id].table()
            bus = t.bus_voltage_v[ok]
            op = drive.for_thrust(t.thrust_n[ok], motor=motor, esc=esc, propeller=table, open_circuit_voltage_v=bus,
                                  pack_resistance_ohm=0.0, density_kg_m3=DENSITY_KG_M3)
            power = op.electrical_power_w.copy()
            short = op.status == Status.INFEASIBLE_THRUST
            assert np.all((op.status == Status.OK) | short)
            if short.any():
                full = drive.at_duty(1.0, motor=motor, esc=esc, propeller=table, open_circuit_voltage_v=bus[short],
                                     density_kg_m3=DENSITY_KG_M3)
                power[short] = full.electrical_power_w
                infeasible += int(short.sum())
            errors.append(power / (bus * t.current_a[ok]) - 1.0)
    return CrossVoltage(np.concatenate(errors), infeasible, scored_tests, fits)


@pytest.fixture(scope="module")
def calibrated() -> CrossVoltage:
    return cross_voltage(fit_pwm_loss=True)


@pytest.fixture(scope="module")
def uncalibrated() -> CrossVoltage:
    return cross_voltage(fit_pwm_loss=False)


def test_cross_voltage_prediction_meets_the_goal(calibrated: CrossVoltage, uncalibrated: CrossVoltage) -> None:
    # Measured (issue 4 closing note): 448 points of 62 tests (10 held-out motors); calibrated median 3.6 %,
    # p90 8.6 % (2 points beyond the model's full throttle); un-calibrated ESC median 10.0 %, p90 15.8 %.
    print(f"\ncalibrated: n={calibrated.errors.size} tests={calibrated.tests} median={calibrated.median:.4f} "
          f"p90={calibrated.p90:.4f} infeasible={calibrated.infeasible}; uncalibrated: median="
          f"{uncalibrated.median:.4f} p90={uncalibrated.p90:.4f}")
    assert calibrated.errors.size >= 400 and calibrated.tests >= 50
    assert calibrated.median <= GOAL_MEDIAN
    assert calibrated.p90 <= GOAL_P90


def test_calibration_is_what_carries_the_voltage_change(calibrated: CrossVoltage,
                                                        uncalibrated: CrossVoltage) -> None:
    # the un-calibrated reference model under-predicts the 11.1 V partial-throttle power (the ~13 % the
    # PROVENANCE note describes), and the calibrated k_pwm removes most of that bias
    assert np.median(uncalibrated.errors) < -0.05
    assert abs(np.median(calibrated.errors)) < 0.5 * abs(np.median(uncalibrated.errors))
    assert calibrated.median < 0.5 * uncalibrated.median
    assert uncalibrated.p90 > GOAL_P90  # without the ESC term the goal is out of reach


def test_every_fold_identifies_a_consistent_esc_term(calibrated: CrossVoltage) -> None:
    values = []
    for fit in calibrated.fits.values():
        assert fit.esc is not None
        k = fit.esc.parameters["pwm_loss_coefficient"]
        assert k.status == "identified" and k.standard_error < 0.1 * k.value
        values.append(k.value)
        for motor in fit.motors.values():  # every motor has full-throttle 7.4 V samples: Kv and R identified
            assert motor.parameters["kv_rpm_per_v"].status == "identified"
            assert motor.parameters["resistance_ohm"].status == "identified"
    assert np.ptp(values) < 0.15 * np.median(values)  # one ESC: the folds agree
