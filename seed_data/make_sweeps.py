"""Generate the invented demo bench sweeps (seed_data/sweeps/*.csv) from the reference model plus noise.

SYNTHETIC DEMO DATA: made from the demo parts' own values with a fixed random seed; never a check value.
Run: python seed_data/make_sweeps.py  (rewrites the CSV files and the "bench_runs" list in northfold.json; run
seed_data/make_props.py first when the propellers' coefficients change).

Each sweep is what a careful team records on its own flight packs: an idle row (motor stopped, the load cell's
zero offset of a gram or so, which may read slightly negative), then throttle 0.15 … 1.0 in steps of 0.05 while
the pack sags under load and drains a little. Every point stays inside the parts' ratings (motor current and
power, the ESC's continuous current, the pack's C-rating and cell count); the generator refuses to write one
that does not, and tests/services/test_demo_data.py checks the files independently.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np

from server.bench_runs.derived import run_air_density_kg_m3
from server.physics import battery, drive
from server.physics.esc import EscParams
from server.physics.motor import MotorParams
from server.physics.propeller import PropellerTable

HERE = Path(__file__).resolve().parent
# (motor, propeller, ESC, pack): two quad motors, each on two props or two pack voltages, all on one ESC, so the
# pooled calibration can separate motor losses from the ESC's partial-throttle loss (3S, 4S and 6S).
SWEEPS = [("NS-M3508-580", "NS-P11x4.5", "NS-E45", "NS-B3S-2200"),
          ("NS-M3508-580", "NS-P12x4.5", "NS-E45", "NS-B3S-2200"),
          ("NS-M3508-580", "NS-P11x4.5", "NS-E45", "NS-B4S-5200"),
          ("NS-M3508-580", "NS-P12x4.5", "NS-E45", "NS-B4S-5200"),
          ("NS-M4010-370", "NS-P13x4.4", "NS-E45", "NS-B4S-5200"),
          ("NS-M4010-370", "NS-P13x4.4", "NS-E45", "NS-B6S-5000")]
HIDDEN_K_PWM = 0.35  # the invented "true" ESC behaviour the demo calibration should find
THROTTLES = np.round(np.arange(0.15, 1.0001, 0.05), 3)
SITE_ALTITUDE_M = 300.0
WIRING_RESISTANCE_OHM = 0.005  # leads and connectors between pack and ESC (invented)
START_SOC, END_SOC = 0.97, 0.92  # the pack drains a little over one sweep
IDLE_CURRENT_A = 0.05  # the ESC's own draw with the motor stopped
GRAM_FORCE_N = 9.80665e-3


def esc_params(part: dict[str, Any]) -> EscParams:
    """The demo ESC as the engine models it, with the hidden partial-throttle coefficient."""
    return EscParams(on_path_resistance_ohm=part["r_on_path_ohm"],
                     switching_frequency_hz=part["pwm_frequency_khz"] * 1e3,
                     transition_time_s=part["switching_time_ns"] * 1e-9, dead_time_s=part["dead_time_ns"] * 1e-9,
                     body_diode_drop_v=part["diode_drop_v"], input_esr_ohm=part["input_esr_ohm"],
                     pwm_loss_coefficient=np.asarray(HIDDEN_K_PWM, dtype=float))


def motor_params(part: dict[str, Any]) -> MotorParams:
    return MotorParams(part["kv_rpm_per_v"], part["winding_resistance_ohm"], part["no_load_current_a"],
                       part["inductance_uh"] * 1e-6)


def static_table(part: dict[str, Any]) -> PropellerTable:
    rows = part.get("static_table") or [{"rpm": 0.0, "ct": part["ct"], "cp": part["cp"]}]
    return PropellerTable.from_rows(part["diameter_in"] * 0.0254, [([r["rpm"] for r in rows],
                                                                     [r["ct"] for r in rows],
                                                                     [r["cp"] for r in rows])])


def check_ratings(name: str, motor: dict[str, Any], esc: dict[str, Any], pack: dict[str, Any], op: Any) -> None:
    """Refuse a sweep that would take a part past its rating (the sweep is what a careful team would run)."""
    cells = pack["cells_series"]
    problems = []
    if not esc["min_cells"] <= cells <= esc["max_cells"] or cells > motor["max_cells"]:
        problems.append(f"{cells}S is outside the ESC's or the motor's cell range")
    if np.max(op.motor_current_a) > motor["max_current_a"]:
        problems.append(f"motor current {np.max(op.motor_current_a):.1f} A > {motor['max_current_a']} A")
    if np.max(op.motor_current_a) > esc["continuous_current_a"]:
        problems.append(f"ESC current {np.max(op.motor_current_a):.1f} A > {esc['continuous_current_a']} A")
    if np.max(op.electrical_power_w) > motor["max_power_w"]:
        problems.append(f"power {np.max(op.electrical_power_w):.0f} W > {motor['max_power_w']} W")
    if np.max(op.bus_current_a) > pack["max_continuous_c"] * pack["capacity_mah"] / 1000:
        problems.append("pack current above its C-rating")
    if problems:
        raise SystemExit(f"{name}: " + "; ".join(problems))


def main() -> None:
    data = json.loads((HERE / "northfold.json").read_text())
    by_pn = {p["part_number"]: p for kind in ("motors", "propellers", "escs", "batteries") for p in data[kind]}
    rng = np.random.default_rng(20261201)
    density = run_air_density_kg_m3(altitude_m=SITE_ALTITUDE_M)
    runs = []
    for motor_pn, prop_pn, esc_pn, pack_pn in SWEEPS:
        m, p, e, b = by_pn[motor_pn], by_pn[prop_pn], by_pn[esc_pn], by_pn[pack_pn]
        full_v = battery.full_voltage_per_cell_v(b["chemistry"])
        soc = np.linspace(START_SOC, END_SOC, THROTTLES.size)
        ocv = b["cells_series"] * battery.open_circuit_voltage_per_cell_v(soc, full_v)
        resistance = battery.pack_resistance_ohm(b["cells_series"], b["cell_resistance_mohm"] * 1e-3,
                                                 b["cells_parallel"], WIRING_RESISTANCE_OHM)
        op = drive.at_duty(THROTTLES, motor=motor_params(m), esc=esc_params(e), propeller=static_table(p),
                           open_circuit_voltage_v=ocv, pack_resistance_ohm=resistance, density_kg_m3=density)
        name = f"{motor_pn}_{prop_pn}_{b['cells_series']}s.csv".replace("NS-", "").lower()
        check_ratings(name, m, e, b, op)
        noise = 1 + 0.01 * rng.standard_normal((3, THROTTLES.size))
        lines = ["throttle,bus_voltage_v,bus_current_a,rpm,thrust_g"]
        idle_v = b["cells_series"] * float(battery.open_circuit_voltage_per_cell_v(START_SOC, full_v))
        idle_thrust_g = 0.8 * rng.standard_normal()  # the load cell's zero offset, about a gram
        lines.append(f"0.000,{idle_v - IDLE_CURRENT_A * float(resistance):.3f},{IDLE_CURRENT_A:.3f},0,"
                     f"{idle_thrust_g:.1f}")
        for i, t in enumerate(THROTTLES):
            thrust_g = op.thrust_n[i] * noise[2, i] / GRAM_FORCE_N + 0.5 * rng.standard_normal()
            lines.append(f"{t:.3f},{op.bus_voltage_v[i]:.3f},{op.bus_current_a[i] * noise[0, i]:.3f},"
                         f"{op.rpm[i] * noise[1, i]:.0f},{thrust_g:.1f}")
        (HERE / "sweeps" / name).write_text("\n".join(lines) + "\n")
        runs.append({"file": f"sweeps/{name}",
                     "name": f"{motor_pn} + {prop_pn} on {pack_pn} (synthetic)",
                     "motor": motor_pn, "propeller": prop_pn, "esc": esc_pn, "pack": pack_pn,
                     "altitude_m": SITE_ALTITUDE_M,
                     "notes": "Synthetic demo sweep generated from the reference model plus noise "
                              "(seed_data/make_sweeps.py); invented, not a measurement."})
    data["bench_runs"] = runs
    (HERE / "northfold.json").write_text(json.dumps(data, indent=2, ensure_ascii=False) + "\n")


if __name__ == "__main__":
    main()
