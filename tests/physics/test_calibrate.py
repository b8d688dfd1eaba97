"""Calibration (server.physics.calibrate): UIUC static tables, synthetic round trips, identifiability."""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np
import pytest

from server.physics import drive
from server.physics._types import Status
from server.physics.calibrate import (
    MAX_RELATIVE_STANDARD_ERROR,
    MotorPrior,
    RunData,
    fit_esc,
    fit_joint,
    fit_motor,
    fit_propeller_static,
    thinned,
)
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable

UIUC_DIR = Path(__file__).resolve().parents[1] / "data" / "reference" / "propellers"
RHO = 1.225


def _uiuc() -> dict[str, tuple[float, np.ndarray, np.ndarray, np.ndarray]]:
    out = {}
    with (UIUC_DIR / "propellers.csv").open(newline="") as fh:
        for p in csv.DictReader(fh):
            with (UIUC_DIR / p["static_file"]).open(newline="") as gh:
                rows = list(csv.DictReader(gh))
            out[p["prop_id"]] = (float(p["diameter_m"]), *(np.array([float(r[k]) for r in rows])
                                                           for k in ("rpm", "ct", "cp")))
    return out


UIUC = _uiuc()


@pytest.mark.parametrize("prop_id", sorted(UIUC))
def test_uiuc_table_is_recovered_from_noisy_thrust_and_torque_samples(prop_id: str) -> None:
    # UIUC Propeller Database, Vols. 1-2 (Brandt & Selig 2011; Deters, Ananda & Selig 2014), static files:
    # 400 samples spread over the table's rpm range, thrust and torque from the table (linear in rpm between
    # rows, docs/model-reference.md#propeller) with 1 % noise; fitted at the table's rpm -> every row's CT and CP
    # within 1 %.
    diameter, rpm_rows, ct_rows, cp_rows = UIUC[prop_id]
    order = np.argsort(rpm_rows)
    rng = np.random.default_rng(7)
    rpm = rng.uniform(rpm_rows.min(), rpm_rows.max(), 400)
    n = rpm / 60
    thrust = np.interp(rpm, rpm_rows[order], ct_rows[order]) * RHO * n**2 * diameter**4
    torque = np.interp(rpm, rpm_rows[order], cp_rows[order]) * RHO * n**2 * diameter**5 / (2 * math.pi)
    thrust *= 1 + 0.01 * rng.standard_normal(rpm.size)
    torque *= 1 + 0.01 * rng.standard_normal(rpm.size)
    fit = fit_propeller_static(rpm, thrust, RHO, diameter, torque, rpm_knots=np.unique(rpm_rows))
    table = fit.table()
    ct = np.interp(rpm_rows, table.axis_values, table.thrust_coefficient)
    cp = np.interp(rpm_rows, table.axis_values, table.power_coefficient)
    np.testing.assert_allclose(ct, ct_rows, rtol=0.01)
    np.testing.assert_allclose(cp, cp_rows, rtol=0.01)
    assert fit.samples_used == 400 and 0.005 < fit.residual_rms < 0.03  # the 1 % noise, not a perfect fit


@pytest.mark.parametrize("prop_id", sorted(p for p in UIUC if p.startswith(("sf_", "te_"))))
def test_smoothing_fit_reproduces_the_vol1_static_rows(prop_id: str) -> None:
    # UIUC Vol. 1 (Brandt & Selig 2011) static rows themselves as samples, default (quantile) knots: the
    # piecewise-linear CT(rpm)/CP(rpm) reproduces the table within 1 % RMS and 1.5 % at the worst row.
    # (Vol. 2 files scatter about 1.5 % row to row, which a smoothing fit must not follow; not asserted here.)
    diameter, rpm, ct_rows, cp_rows = UIUC[prop_id]
    n = rpm / 60
    fit = fit_propeller_static(rpm, ct_rows * RHO * n**2 * diameter**4, RHO, diameter,
                               cp_rows * RHO * n**2 * diameter**5 / (2 * math.pi))
    table = fit.table()
    for fitted, rows in ((table.thrust_coefficient, ct_rows), (table.power_coefficient, cp_rows)):
        rel = np.interp(rpm, table.axis_values, fitted) / rows - 1
        assert np.sqrt(np.mean(rel**2)) <= 0.01
        assert np.max(np.abs(rel)) <= 0.015
    assert all(p.status == "identified" and p.standard_error > 0 for p in fit.parameters.values())


# --- synthetic bench runs through the drive model ----------------------------------------------------------

TRUE_MOTORS = {"m1": MotorParams(2300.0, 0.08, 0.9), "m2": MotorParams(1900.0, 0.13, 0.6),
               "m3": MotorParams(2600.0, 0.11, 1.1)}
TRUE_PROPS = {"p1": PropellerTable.constant(0.127, 0.11, 0.055), "p2": PropellerTable.constant(0.127, 0.13, 0.07)}
TRUE_ESC = EscParams(pwm_loss_coefficient=0.3)
DUTIES = np.linspace(0.3, 1.0, 8)


def synthetic_runs(seed: int = 11, voltages: tuple[float, ...] = (7.4, 11.1), duties: np.ndarray = DUTIES,
                   esc: EscParams = TRUE_ESC, torque: bool = False) -> list[RunData]:
    rng = np.random.default_rng(seed)
    runs = []
    for mid, motor in TRUE_MOTORS.items():
        for pid, prop in TRUE_PROPS.items():
            for v in voltages:
                op = drive.at_duty(duties, motor=motor, esc=esc, propeller=prop, open_circuit_voltage_v=v,
                                   density_kg_m3=RHO)
                assert np.all(op.status == Status.OK)
                noise = lambda: 1 + 0.003 * rng.standard_normal(duties.size)  # noqa: E731
                runs.append(RunData(mid, pid, 0.127, RHO, op.bus_voltage_v, op.bus_current_a * noise(),
                                    op.rpm * noise(), op.thrust_n * noise(), duties,
                                    torque_nm=op.torque_nm * noise() if torque else None))
    return runs


def test_joint_fit_recovers_known_parameters_within_three_standard_errors() -> None:
    # round trip: sweeps generated by drive.at_duty from known parameters + 0.3 % noise (seed 11)
    fit = fit_joint(synthetic_runs())
    assert fit.esc is not None
    checks = [(fit.esc.parameters["pwm_loss_coefficient"], 0.3)]
    for mid, motor in TRUE_MOTORS.items():
        p = fit.motors[mid].parameters
        checks += [(p["kv_rpm_per_v"], float(motor.kv_rpm_per_v)),
                   (p["resistance_ohm"], float(motor.resistance_ohm) + 0.010),  # R' includes the ESC path
                   (p["no_load_current_a"], float(motor.no_load_current_a))]
    for param, truth in checks:
        assert param.status == "identified"
        assert 0 < param.standard_error < 0.1 * abs(truth)
        assert abs(param.value - truth) <= 3 * param.standard_error, (param, truth)
    for pid, prop in TRUE_PROPS.items():
        table = fit.propellers[pid]
        np.testing.assert_allclose(table.thrust_coefficient, prop.thrust_coefficient[0], rtol=0.01)
        for k, cp in enumerate(table.power_coefficient):  # CP from electrical power only: within 3 SE
            assert abs(cp - prop.power_coefficient[0]) <= 3 * table.parameters[f"cp[{k}]"].standard_error
    assert fit.residual_rms < 0.01 and fit.samples_used == 12 * DUTIES.size


def test_a_thinned_pool_keeps_every_full_throttle_sample_and_recovers_the_same_parameters() -> None:
    # round trip as above (known parameters + 0.3 % noise): the pool thinned to half its samples (the bound on a
    # refit's cost) still recovers every identified parameter within 3 of its (larger) standard errors
    runs = synthetic_runs()
    total = sum(run.rpm.size for run in runs)
    pool, stride = thinned(runs, limit=total // 2)
    assert stride == 2 and sum(run.rpm.size for run in pool) <= total // 2 + len(runs)
    for run, kept in zip(runs, pool, strict=True):
        assert np.count_nonzero(kept.duty >= 1.0) == np.count_nonzero(run.duty >= 1.0) > 0
        assert kept.throttle[0] == run.throttle[0]
    whole, part = fit_joint(runs), fit_joint(pool)
    assert part.samples_used < whole.samples_used
    for mid, motor in TRUE_MOTORS.items():
        for name, truth in (("kv_rpm_per_v", float(motor.kv_rpm_per_v)), ("no_load_current_a",
                                                                           float(motor.no_load_current_a))):
            p, q = part.motors[mid].parameters[name], whole.motors[mid].parameters[name]
            assert p.status == "identified" and abs(p.value - truth) <= 3 * p.standard_error
            assert p.standard_error >= q.standard_error
    assert thinned(runs, limit=total) == (runs, 1)


def test_fitted_model_predicts_an_untested_voltage() -> None:
    # calibrate on 7.4 V and 11.1 V, predict 14.8 V at a given thrust: within 1 % of the true model
    fit = fit_joint(synthetic_runs())
    assert fit.esc is not None
    kwargs = {"propeller": TRUE_PROPS["p1"], "open_circuit_voltage_v": 14.8, "density_kg_m3": RHO}
    truth = drive.for_thrust(2.5, motor=TRUE_MOTORS["m2"], esc=TRUE_ESC, **kwargs)
    kwargs["propeller"] = fit.propellers["p1"].table()
    predicted = drive.for_thrust(2.5, motor=fit.motor_params("m2"), esc=fit.esc.esc_params(), **kwargs)
    assert predicted.electrical_power_w == pytest.approx(float(truth.electrical_power_w), rel=0.01)


def test_full_throttle_only_data_leave_k_pwm_fixed_with_a_note() -> None:
    # without partial-throttle samples nothing determines k_pwm: it stays at the default 0, flagged "fixed"
    runs = synthetic_runs(duties=np.array([1.0]), voltages=(6.0, 7.4, 8.4, 9.5, 11.1, 12.6))
    fit = fit_joint(runs)
    assert fit.esc is not None
    k = fit.esc.parameters["pwm_loss_coefficient"]
    assert k.status == "fixed" and k.value == 0.0 and k.source == "default"
    assert any("pwm_loss_coefficient" in n and str(MAX_RELATIVE_STANDARD_ERROR) in n for n in fit.notes)
    assert fit.esc.parameters["on_path_resistance_ohm"].status == "fixed"
    assert fit.motors["m1"].parameters["kv_rpm_per_v"].status == "identified"


def test_unidentified_motor_value_is_kept_at_its_datasheet_value() -> None:
    # one motor, one propeller, full throttle only, one voltage: I0 and CP cannot both be determined from
    # electrical power at one operating point -> I0 stays at the datasheet value and says so
    runs = [r for r in synthetic_runs(duties=np.array([1.0]), voltages=(11.1,)) if r.motor_id == "m1"
            and r.propeller_id == "p1"]
    fit = fit_motor(runs, prior=MotorPrior(kv_rpm_per_v=2400.0, resistance_ohm=0.07, no_load_current_a=0.8))
    i0 = fit.parameters["no_load_current_a"]
    assert i0.status == "fixed" and i0.value == 0.8 and i0.source == "datasheet"
    assert any(n.startswith("m1:no_load_current_a fixed") for n in fit.notes)


def test_fit_motor_with_torque_and_fit_esc_with_known_parts() -> None:
    runs = [r for r in synthetic_runs(torque=True) if r.motor_id == "m3"]
    motor_fit = fit_motor(runs, esc=TRUE_ESC)
    assert motor_fit.value("kv_rpm_per_v") == pytest.approx(2600.0, rel=0.01)
    assert motor_fit.value("no_load_current_a") == pytest.approx(1.1, rel=0.05)
    esc_fit = fit_esc(synthetic_runs(seed=3), motors=TRUE_MOTORS, propellers=TRUE_PROPS)
    k = esc_fit.parameters["pwm_loss_coefficient"]
    assert k.status == "identified" and abs(k.value - 0.3) <= 3 * k.standard_error
    assert esc_fit.samples_used == 12 * int(np.sum(DUTIES < 1.0))


def _problem_of(runs: list[RunData], monkeypatch: pytest.MonkeyPatch, **kwargs: object) -> object:
    """The pooled problem fit_joint builds, with the free parameters of its first solve."""
    from server.physics.calibrate import drive_problem

    captured: list[tuple[drive_problem._PooledProblem, list[bool]]] = []
    solve = drive_problem._PooledProblem.solve

    def capture(self: drive_problem._PooledProblem, method: str = "analytic") -> object:
        if not captured:
            captured.append((self, [q.free for q in self.params]))
        return solve(self, method)

    monkeypatch.setattr(drive_problem._PooledProblem, "solve", capture)
    fit_joint(runs, **kwargs)  # type: ignore[arg-type]
    problem, free = captured[0]
    for q, was_free in zip(problem.params, free, strict=True):
        q.free = was_free
    return problem


@pytest.mark.parametrize("fixed", [False, True])
def test_closed_form_jacobian_equals_finite_differences(fixed: bool, monkeypatch: pytest.MonkeyPatch) -> None:
    """The fit's analytic Jacobian (every residual kind: power at guessed and at trusted duties, full-throttle voltage,
    torque, priors; a fixed motor with the ESC's R_on free) against central differences away from the optimum."""
    from dataclasses import replace

    runs = synthetic_runs(torque=False)[:6]
    runs[1] = replace(runs[1], duty_trusted=True)
    runs[2] = replace(runs[2], torque_nm=runs[2].rpm * 1e-5)
    extra: dict[str, object] = {"motor_priors": {r.motor_id: MotorPrior(900.0, 0.1, 0.5) for r in runs}}
    if fixed:
        extra = {"fixed_motors": {runs[0].motor_id: MotorParams(920.0, 0.09, 0.5)}, "fit_on_path_resistance": True}
    problem = _problem_of(runs, monkeypatch, esc=EscParams(pwm_loss_coefficient=0.2), **extra)
    free = [q for q in problem.params if q.free]  # type: ignore[attr-defined]
    assert any(q.name == "esc:on_path_resistance_ohm" for q in free) == fixed
    x = np.array([q.value for q in free]) * (1 + 0.05 * np.random.default_rng(3).standard_normal(len(free)))
    analytic = problem.jacobian(x)  # type: ignore[attr-defined]
    numeric = np.empty_like(analytic)
    for c in range(x.size):
        h = 1e-6 * max(abs(x[c]), 1e-3)
        up, down = x.copy(), x.copy()
        up[c] += h
        down[c] -= h
        numeric[:, c] = (problem.residuals(up) - problem.residuals(down)) / (2 * h)  # type: ignore[attr-defined]
    scale = np.max(np.abs(numeric), axis=0) + 1e-12
    assert np.max(np.abs(analytic - numeric) / scale) < 1e-6
