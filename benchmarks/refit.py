"""Time the pooled bench refit (the fit an upload's refit job runs) on synthetic runs, against one run's fit.

Usage: python benchmarks/refit.py [--runs 50] [--samples 200] [--repeat 3]
Generates ``runs`` throttle sweeps of ``samples`` samples each through one ESC, with five motors, five propellers
and three supply voltages, from known parameters through the physics engine (``drive.at_duty``) plus 0.5 % noise:
invented numbers for this benchmark only, never a check value. Times ``fit_joint`` over the whole pool (what
``services.calibrations.calibrate_esc`` runs after an upload) and over one run alone in the same process, prints
the recovered parameters beside the true ones, and ends with
`refit: N runs x M samples in S s (R x one run's fit in the same process)`.
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np

from server.physics import drive
from server.physics.calibrate import MotorPrior, RunData, fit_joint
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable

MOTORS = {f"m{k}": (kv, r, i0) for k, (kv, r, i0) in enumerate(
    [(920.0, 0.10, 0.5), (700.0, 0.14, 0.4), (1100.0, 0.07, 0.7), (460.0, 0.18, 0.3), (1400.0, 0.05, 0.9)])}
PROPS = {f"p{k}": (d, ct, cp) for k, (d, ct, cp) in enumerate(
    [(0.254, 0.105, 0.045), (0.229, 0.110, 0.050), (0.203, 0.100, 0.040), (0.330, 0.112, 0.042),
     (0.178, 0.095, 0.048)])}
ESC = EscParams(pwm_loss_coefficient=0.35)
VOLTAGES = (11.1, 14.8, 16.8)


def table(diameter: float, ct: float, cp: float) -> PropellerTable:
    """An invented static table: CT and CP rising gently with rpm (enough curvature for the knots to matter)."""
    rpm = np.linspace(2000.0, 12000.0, 9)
    return PropellerTable(diameter, rpm, ct * (1 + 0.04 * rpm / 12000), cp * (1 + 0.08 * rpm / 12000))


def synthetic_runs(count: int, samples: int, seed: int = 1) -> list[RunData]:
    rng = np.random.default_rng(seed)
    runs = []
    motor_ids, prop_ids = sorted(MOTORS), sorted(PROPS)
    for k in range(count):
        mid, pid, voltage = motor_ids[k % 5], prop_ids[(k // 5) % 5], VOLTAGES[k % 3]
        kv, r, i0 = MOTORS[mid]
        throttle = np.linspace(0.15, 1.0, samples)
        op = drive.at_duty(throttle, motor=MotorParams(kv, r - 0.010, i0), esc=ESC, propeller=table(*PROPS[pid]),
                           open_circuit_voltage_v=voltage, pack_resistance_ohm=0.02)
        ok = np.isfinite(op.rpm)

        def noisy(a: np.ndarray, rel: float = 0.005, ok: np.ndarray = ok) -> np.ndarray:
            return a[ok] * (1 + rel * rng.standard_normal(int(ok.sum())))

        runs.append(RunData(mid, pid, PROPS[pid][0], 1.225, noisy(op.bus_voltage_v, 0.001),
                            noisy(op.bus_current_a), noisy(op.rpm, 0.002), noisy(op.thrust_n), throttle[ok]))
    return runs


def timed(runs: list[RunData], repeat: int) -> tuple[float, object]:
    priors = {mid: MotorPrior(kv, None, None) for mid, (kv, _, _) in MOTORS.items()}
    times, fit = [], None
    for _ in range(repeat):
        start = time.perf_counter()
        fit = fit_joint(runs, esc=EscParams(), motor_priors={r.motor_id: priors[r.motor_id] for r in runs})
        times.append(time.perf_counter() - start)
    return statistics.median(times), fit


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--runs", type=int, default=50)
    parser.add_argument("--samples", type=int, default=200)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    runs = synthetic_runs(args.runs, args.samples)
    one_s, _ = timed(runs[:1], args.repeat)
    pool_s, fit = timed(runs, args.repeat)
    print(f"one run ({runs[0].rpm.size} samples): {one_s:.3f} s median of {args.repeat}")
    print(f"pool ({len(runs)} runs, {sum(r.rpm.size for r in runs)} samples): {pool_s:.3f} s median of {args.repeat}")
    for mid, (kv, r, i0) in MOTORS.items():
        m = fit.motors[mid].parameters  # type: ignore[attr-defined]
        print(f"  {mid}: Kv {m['kv_rpm_per_v'].value:.1f} (true {kv}), R' {m['resistance_ohm'].value:.4f} "
              f"(true {r}), I0 {m['no_load_current_a'].value:.3f} (true {i0})")
    k_pwm = fit.esc.parameters["pwm_loss_coefficient"]  # type: ignore[attr-defined]
    print(f"  k_pwm {k_pwm.value:.3f} ± {k_pwm.standard_error:.3f} (true {float(ESC.pwm_loss_coefficient)})")
    print(f"refit: {args.runs} runs x {args.samples} samples in {pool_s:.2f} s ({pool_s / one_s:.1f} x one run's fit "
          "in the same process)")


if __name__ == "__main__":
    main()
