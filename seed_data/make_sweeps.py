"""Generate the invented demo bench sweeps (seed_data/sweeps/*.csv) from the reference model plus noise.

SYNTHETIC DEMO DATA: made from the demo parts' own values with a fixed random seed; never a check value.
Run: python seed_data/make_sweeps.py  (rewrites the CSV files and the "bench_runs" list in northfold.json).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from server.physics import drive
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable

HERE = Path(__file__).resolve().parent
# (motor, propeller, ESC, supply voltage): one quad motor on two props at two voltages, all on one ESC, so the
# pooled calibration can separate motor losses from the ESC's partial-throttle loss.
SWEEPS = [("NS-M2814-880", "NS-P12x4.5", "NS-E45", 11.1), ("NS-M2814-880", "NS-P12x4.5", "NS-E45", 14.8),
          ("NS-M2814-880", "NS-P13x4.4", "NS-E45", 11.1), ("NS-M2814-880", "NS-P13x4.4", "NS-E45", 14.8)]
HIDDEN_K_PWM = 0.35  # the invented "true" ESC behaviour the demo calibration should find
THROTTLES = np.round(np.arange(0.15, 1.0001, 0.05), 3)


def main() -> None:
    data = json.loads((HERE / "northfold.json").read_text())
    by_pn = {p["part_number"]: p for kind in ("motors", "propellers", "escs") for p in data[kind]}
    rng = np.random.default_rng(20261201)
    runs = []
    for motor_pn, prop_pn, esc_pn, volts in SWEEPS:
        m, p, e = by_pn[motor_pn], by_pn[prop_pn], by_pn[esc_pn]
        motor = MotorParams(m["kv_rpm_per_v"], m["winding_resistance_ohm"], m["no_load_current_a"],
                            (m.get("inductance_uh") or 30) * 1e-6)
        esc = EscParams(on_path_resistance_ohm=e.get("r_on_path_ohm") or 0.01,
                        switching_frequency_hz=(e.get("pwm_frequency_khz") or 24) * 1e3,
                        pwm_loss_coefficient=HIDDEN_K_PWM)
        table = p["static_table"]
        prop = PropellerTable.from_rows(p["diameter_in"] * 0.0254, [([r["rpm"] for r in table],
                                                                     [r["ct"] for r in table],
                                                                     [r["cp"] for r in table])])
        op = drive.at_duty(THROTTLES, motor=motor, esc=esc, propeller=prop, open_circuit_voltage_v=volts,
                           pack_resistance_ohm=0.02)
        noise = 1 + 0.01 * rng.standard_normal((3, THROTTLES.size))
        name = f"{motor_pn}_{prop_pn}_{volts:g}V.csv".replace("NS-", "").lower()
        lines = ["throttle,bus_voltage_v,bus_current_a,rpm,thrust_g"]
        for i, t in enumerate(THROTTLES):
            lines.append(f"{t:.3f},{op.bus_voltage_v[i]:.3f},{op.bus_current_a[i] * noise[0, i]:.3f},"
                         f"{op.rpm[i] * noise[1, i]:.0f},{op.thrust_n[i] * noise[2, i] / 9.80665e-3:.1f}")
        (HERE / "sweeps" / name).write_text("\n".join(lines) + "\n")
        runs.append({"file": f"sweeps/{name}", "name": f"{motor_pn} + {prop_pn}, {volts:g} V supply (synthetic)",
                     "motor": motor_pn, "propeller": prop_pn, "esc": esc_pn, "supply_voltage_v": volts,
                     "altitude_m": 300, "notes": "Synthetic demo sweep generated from the reference model plus 1 % "
                                                 "noise (seed_data/make_sweeps.py); invented, not a measurement."})
    data["bench_runs"] = runs
    (HERE / "northfold.json").write_text(json.dumps(data, indent=2, ensure_ascii=False) + "\n")


if __name__ == "__main__":
    main()
