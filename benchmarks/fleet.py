"""Benchmark: fleet plan for M missions x K candidates each, the full price-of-commonality curve.

A seeded, invented parts pool (12 packs 3-6S, 6 ESCs, 15 motors and 15 propellers from small to
large)
feeds M missions of increasing size (a small quad to a heavy hexa). Each mission can use the parts near its
size class (neighbouring classes overlap, so parts are shared between missions); the cruise power of a
combination grows with how far its motor and propeller are from the mission's ideal, with pack mass, and with
ESC and motor losses, with a little noise. Each mission keeps its top K feasible candidates by cruise power,
as a ranking would hand them over. The numbers are plausible magnitudes only; this is a solver benchmark.

    python benchmarks/fleet.py [--missions M] [--candidates K] [--metric cruise_energy|endurance_margin]
                              [--stocking-cost C] [--seed S]

Prints the optimum plan's solve time, every trade-off point's solve time, and ends with
``fleet: M missions x K candidates, tradeoff P points in S s (optimum O)``.
"""

from __future__ import annotations

import argparse
import itertools
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from server.selection.fleet import FleetOptions, MissionCandidates, optimise, tradeoff  # noqa: E402


def make_missions(n_missions: int = 5, candidates: int = 300, seed: int = 11) -> list[MissionCandidates]:
    """Seeded missions over a shared pool of 12 packs, 6 ESCs, 15 motors and 15 propellers."""
    rng = np.random.default_rng(seed)
    cells = rng.integers(3, 7, 12)
    capacity_ah = rng.uniform(1.5, 10.0, 12)
    pack_wh = cells * 3.7 * capacity_ah
    pack_size = np.argsort(np.argsort(pack_wh)) / 11.0  # 0 (smallest) .. 1 (largest)
    esc_eff = rng.uniform(0.93, 0.98, 6)
    esc_size = np.linspace(0.0, 1.0, 6)
    motor_size = np.sort(rng.uniform(0.0, 1.0, 15))
    motor_eff = rng.uniform(0.78, 0.88, 15)
    prop_size = np.sort(rng.uniform(0.0, 1.0, 15))
    missions = []
    for m, size in enumerate(np.linspace(0.1, 0.9, n_missions)):
        base_w = 150.0 + 1800.0 * size**1.5  # cruise power of the ideal system [W]
        packs = np.flatnonzero(np.abs(pack_size - size) < 0.35)
        escs = np.flatnonzero(esc_size >= size - 0.25)
        motors = np.flatnonzero(np.abs(motor_size - size) < 0.3)
        props = np.flatnonzero(np.abs(prop_size - size) < 0.3)
        combos = np.array(list(itertools.product(packs, (1, 2), escs, motors, props)))
        p, k, e, mo, q = combos.T
        power = (base_w / (esc_eff[e] * motor_eff[mo])
                 * (1.0 + 2.0 * (motor_size[mo] - size) ** 2 + 1.5 * (prop_size[q] - size) ** 2)
                 * (1.0 + 0.15 * (k * pack_size[p] - size))
                 * rng.uniform(0.98, 1.02, combos.shape[0]))
        endurance = 60.0 * 0.8 * k * pack_wh[p] / power
        required = float(np.quantile(endurance, 0.2))
        ok = np.flatnonzero(endurance >= required)
        top = ok[np.argsort(power[ok], kind="stable")[:candidates]]
        missions.append(MissionCandidates(
            mission_id=f"M{m + 1}", weight=float(rng.integers(1, 8) * rng.integers(100, 400)),
            battery_id=p[top] + 100, esc_id=e[top] + 200, motor_id=mo[top] + 300, propeller_id=q[top] + 400,
            packs_in_parallel=k[top], cruise_power_w=power[top], endurance_min=endurance[top],
            min_endurance_min=required))
    return missions


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--missions", type=int, default=5)
    parser.add_argument("--candidates", type=int, default=300)
    parser.add_argument("--metric", default="cruise_energy", choices=("cruise_energy", "endurance_margin"))
    parser.add_argument("--stocking-cost", type=float, default=0.0)
    parser.add_argument("--seed", type=int, default=11)
    args = parser.parse_args()

    missions = make_missions(args.missions, args.candidates, args.seed)
    sizes = [len(m) for m in missions]
    options = FleetOptions(metric=args.metric, stocking_cost=args.stocking_cost)
    print(f"missions {[m.mission_id for m in missions]}, candidates {sizes}, metric {args.metric}")

    started = time.perf_counter()
    result = optimise(missions, options)
    print(f"optimum: {result.status}, objective {result.objective:.6g}, {result.part_numbers} part numbers, "
          f"gap {result.mip_gap}, solve {result.solve_time_s:.3f} s (wall {time.perf_counter() - started:.3f} s)")
    for a in result.assignments:
        print(f"  {a.mission_id}: pack {a.battery_id} x{a.packs_in_parallel}, ESC {a.esc_id}, motor {a.motor_id}, "
              f"prop {a.propeller_id}: {a.metric_value:.2f} (loss {a.loss_vs_own_best:.2f})")

    started = time.perf_counter()
    points = tradeoff(missions, options)
    total = time.perf_counter() - started
    for point in points:
        print(f"  N <= {point.part_numbers:2d}: objective {point.objective:.6g} ({point.parts_used} used, "
              f"{point.status}), solve {point.solve_time_s:.3f} s")
    print(f"fleet: {len(missions)} missions x {max(sizes)} candidates, tradeoff {len(points)} points in "
          f"{total:.2f} s (optimum {result.objective:.6g})")


if __name__ == "__main__":
    main()
