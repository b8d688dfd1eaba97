"""Loader of the bench-5in reference sweeps (tests/data/reference/bench-5in, see PROVENANCE.md).

Source: StrawsonDesign/motor_propeller_testing (P. Cao, J. Strawson, 2018, MIT licence), via
tests/data/reference/PROVENANCE.md. Test-side I/O only; the engine does none.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from server.bench_runs.flags import flag_samples
from server.physics.calibrate import RunData

BENCH_DIR = Path(__file__).resolve().parents[1] / "data" / "reference" / "bench-5in"
DENSITY_KG_M3 = 1.225
"""Air density is not documented for these runs: ISA sea level (it cancels between CT/CP fit and use)."""


@dataclass(frozen=True)
class ReferenceTest:
    test_id: str
    motor_id: str
    propeller_id: str
    supply_nominal_v: float
    source_note: str
    diameter_m: float
    throttle: np.ndarray
    bus_voltage_v: np.ndarray
    current_a: np.ndarray
    rpm: np.ndarray  # NaN where the bench reported 0
    thrust_n: np.ndarray
    supply_limited: np.ndarray  # bool

    def usable(self) -> np.ndarray:
        """Not supply limited (authors' column) and not flagged by our own flags."""
        flags = flag_samples(self.throttle, self.bus_voltage_v, self.current_a, self.rpm, self.thrust_n)
        return flags.usable & ~self.supply_limited

    def run_data(self) -> RunData:
        ok = self.usable()
        return RunData(self.motor_id, self.propeller_id, self.diameter_m, DENSITY_KG_M3, self.bus_voltage_v[ok],
                       self.current_a[ok], self.rpm[ok], self.thrust_n[ok], self.throttle[ok])


def _rows(name: str) -> list[dict[str, str]]:
    with (BENCH_DIR / name).open(newline="") as fh:
        return list(csv.DictReader(fh))


def load_tests() -> dict[str, ReferenceTest]:
    diameters = {r["prop_id"]: float(r["diameter_m"]) for r in _rows("propellers.csv")}
    samples: dict[str, list[dict[str, str]]] = {}
    for row in _rows("sweeps.csv"):
        samples.setdefault(row["test_id"], []).append(row)
    out = {}
    for t in _rows("tests.csv"):
        rows = sorted(samples[t["test_id"]], key=lambda r: int(r["step"]))

        def col(key: str, rows: list[dict[str, str]] = rows) -> np.ndarray:
            return np.array([float(r[key]) if r[key] else np.nan for r in rows])

        out[t["test_id"]] = ReferenceTest(
            t["test_id"], t["motor_id"], t["prop_id"], float(t["supply_nominal_v"]), t["source_note"],
            diameters[t["prop_id"]], col("throttle_assumed"), col("bus_voltage_v"), col("current_a"), col("rpm"),
            col("thrust_n"), col("supply_limited") == 1.0)
    return out


def load_motor_labels() -> dict[str, float | None]:
    return {r["motor_id"]: float(r["kv_nominal_rpm_per_v"]) if r["kv_nominal_rpm_per_v"] else None
            for r in _rows("motors.csv")}
