"""Benchmark: vectorised operating points versus the scalar brentq reference path, same process.

For N synthetic candidates (motor x ESC x padded static prop table x pack, 4 rotors, sagging pack, default ESC
losses) it solves the hover point by thrust and the full-throttle point, in chunks, and times a sample of the
same candidates through tests/physics/scalar_reference.py (brentq, one at a time) to extrapolate its rate.

    python benchmarks/operating_points.py [--n N] [--chunk C] [--scalar-sample S]
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from server.physics import drive  # noqa: E402
from server.physics._types import Status  # noqa: E402
from server.physics.esc import EscParams  # noqa: E402
from server.physics.motor import MotorParams  # noqa: E402
from server.physics.propeller import PropellerTable  # noqa: E402
from tests.physics import scalar_reference as ref  # noqa: E402


def make_library(rng: np.random.Generator, props: int = 40, width: int = 16) -> PropellerTable:
    """Invented static tables (CT rising ~15 % with rpm, as Reynolds effects do), 6..16 points, NaN padded."""
    rows = []
    for _ in range(props):
        k = int(rng.integers(6, width + 1))
        rpm = np.sort(rng.uniform(1500.0, 9000.0, k))
        # CP from a plausible static figure of merit 0.5-0.72, so FM < 1
        # (docs/model-reference.md#propeller-typical-values)
        ct0 = rng.uniform(0.09, 0.13)
        cp0 = np.sqrt(2.0 / np.pi) * ct0**1.5 / rng.uniform(0.5, 0.72)
        drift = np.linspace(0.0, 0.15, k)
        rows.append((rpm, ct0 * (1 + drift), cp0 * (1 + 0.5 * drift)))
    return PropellerTable.from_rows(rng.uniform(0.2, 0.3, props), rows)


def make_candidates(rng: np.random.Generator, n: int, library: PropellerTable) -> dict[str, object]:
    cells = rng.integers(3, 7, n).astype(float)
    return {
        "motor": MotorParams(rng.uniform(500.0, 1200.0, n), rng.uniform(0.05, 0.2, n), rng.uniform(0.3, 1.0, n),
                             inductance_h=rng.uniform(15e-6, 80e-6, n)),
        "esc": EscParams(on_path_resistance_ohm=rng.uniform(0.003, 0.015, n)),
        "propeller": library.take(rng.integers(0, library.batch_shape[0], n)),
        "open_circuit_voltage_v": cells * 4.2,
        "pack_resistance_ohm": cells * rng.uniform(0.003, 0.01, n),
        "rotor_count": 4.0,
        "thrust": rng.uniform(2.0, 6.0, n),
    }


def take(candidates: dict[str, object], idx: slice) -> dict[str, object]:
    def cut(obj: object) -> object:
        if isinstance(obj, np.ndarray) and obj.ndim >= 1:
            return obj[idx]
        if isinstance(obj, MotorParams | EscParams):
            return type(obj)(**{k: cut(v) for k, v in obj.__dict__.items()})
        if isinstance(obj, PropellerTable):
            return PropellerTable(obj.diameter_m[idx], obj.axis_values[idx], obj.thrust_coefficient[idx],
                                  obj.power_coefficient[idx], obj.axis)
        return obj

    return {k: cut(v) for k, v in candidates.items()}


def solve_vectorised(c: dict[str, object]) -> tuple[drive.OperatingPoint, drive.OperatingPoint]:
    kw = {k: v for k, v in c.items() if k != "thrust"}
    return drive.for_thrust(c["thrust"], **kw), drive.full_throttle(**kw)  # type: ignore[arg-type]


def solve_scalar(c: dict[str, object], i: int) -> tuple[object, object]:
    m, e, p = c["motor"], c["esc"], c["propeller"]
    assert isinstance(m, MotorParams) and isinstance(e, EscParams) and isinstance(p, PropellerTable)
    valid = ~np.isnan(p.axis_values[i])
    system = ref.ScalarSystem(
        float(m.kv_rpm_per_v[i]), float(m.resistance_ohm[i]), float(m.no_load_current_a[i]),
        tuple(p.axis_values[i][valid]), tuple(p.thrust_coefficient[i][valid]), tuple(p.power_coefficient[i][valid]),
        float(p.diameter_m[i]), float(c["open_circuit_voltage_v"][i]), float(c["pack_resistance_ohm"][i]),  # type: ignore[index]
        4.0, inductance_h=float(m.inductance_h[i]), on_path_resistance_ohm=float(e.on_path_resistance_ohm[i]))
    return ref.for_thrust(system, float(c["thrust"][i])), ref.at_duty(system, 1.0)  # type: ignore[index]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=200_000, help="candidates (default 200 000)")
    parser.add_argument("--chunk", type=int, default=50_000, help="candidates per vectorised call")
    parser.add_argument("--scalar-sample", type=int, default=200, help="candidates timed on the scalar path")
    args = parser.parse_args()
    rng = np.random.default_rng(20240601)
    library = make_library(rng)
    candidates = make_candidates(rng, args.n, library)

    start = time.perf_counter()
    counts = np.zeros(len(Status), dtype=np.int64)
    worst = 0.0
    for lo in range(0, args.n, args.chunk):
        chunk = take(candidates, slice(lo, min(lo + args.chunk, args.n)))
        hover, full = solve_vectorised(chunk)
        counts += np.bincount(hover.status.ravel(), minlength=len(Status))
        ok = hover.status == Status.OK
        balance = hover.pack_loss_w + hover.rotor_count * (
            hover.shaft_power_w + hover.motor_copper_loss_w + hover.motor_no_load_loss_w
            + hover.esc_conduction_loss_w + hover.extra_loss_w)
        worst = max(worst, float(np.max(np.abs(balance[ok] / hover.pack_power_w[ok] - 1.0), initial=0.0)))
        del full
    vector_s = time.perf_counter() - start
    vector_rate = args.n / vector_s

    sample = min(args.scalar_sample, args.n)
    start = time.perf_counter()
    scalar_results = [solve_scalar(candidates, i) for i in range(sample)]
    scalar_s = time.perf_counter() - start
    scalar_rate = sample / scalar_s
    # untimed: the sample's vectorised duties against the scalar ones
    hover_v, _ = solve_vectorised(take(candidates, slice(0, sample)))
    mismatch = max((abs(float(hover_v.duty[i]) / hover_s["duty"] - 1.0)  # type: ignore[index]
                    for i, (hover_s, _) in enumerate(scalar_results) if hover_s is not None), default=0.0)

    names = ", ".join(f"{s.name}={int(counts[s])}" for s in Status if counts[s])
    print(f"hover-by-thrust statuses: {names}")
    print(f"energy balance worst relative error: {worst:.2e}; vectorised vs scalar duty (sample): {mismatch:.2e}")
    print(f"vectorised: {args.n} candidates x (hover by thrust + full throttle) in {vector_s:.2f} s "
          f"({vector_rate:,.0f}/s, chunks of {args.chunk})")
    print(f"scalar brentq: {sample} candidates in {scalar_s:.2f} s ({scalar_rate:,.0f}/s), "
          f"extrapolated {args.n / scalar_rate:,.0f} s for all")
    print(f"operating_points: {args.n} candidates in {vector_s:.2f} s ({vector_rate:,.0f}/s), "
          f"scalar {scalar_rate:,.0f}/s, ratio {vector_rate / scalar_rate:,.0f}")


if __name__ == "__main__":
    main()
